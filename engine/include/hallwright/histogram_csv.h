#pragma once
// Tracer histograms as CSV, one file per (source, seat): DIR/histograms/<source>__<seat>.csv
// with columns time_s,tracer_63,...,tracer_8000,sum_63,...,sum_8000. One row per 1 ms bin;
// time_s = start of the bin (s from emission). tracer_* = the tracer's energy in the bin (the
// all-ray estimate, i.e. the mean over the batches); sum_* = tracer + the specular paths whose
// delay falls in the bin. Energies in the units of propagation.h (unit-energy source: free
// field gives 1/(4 pi r^2)), 9 significant digits. Written to a temporary name and renamed.
#include <string>
#include <vector>

#include "hallwright/diagnostics.h"
#include "hallwright/propagation.h"
#include "hallwright/scene.h"

namespace hallwright {

/* "<source>__<seat>.csv"; characters other than letters, digits, '.', '-', '_' become '_'. */
std::string HistogramCsvFileName(const Scene& scene, int source, int receiver);

/* The CSV text of one pair; `paths` may be null (sum = tracer). Specular paths later than the
   histogram's last bin are left out. */
std::string FormatHistogramCsv(const ReceiverHistogram& hist, const ReceiverPaths* paths);

/* Writes DIR/histograms/<source>__<seat>.csv for every histogram, pairing each with the
   ReceiverPaths of the same (source, receiver) when `paths` is given; creates the folder.
   False, with an error naming the file, on failure. */
bool WriteHistogramCsv(const std::string& dir, const Scene& scene,
                       const std::vector<ReceiverHistogram>& histograms,
                       const std::vector<ReceiverPaths>* paths, Diagnostics& diag);

}  // namespace hallwright
