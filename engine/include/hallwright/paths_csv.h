#pragma once
// Specular paths as CSV, one file per (source, receiver): DIR/paths/<source>__<receiver>.csv
// with columns order,delay_s,e63,e125,e250,e500,e1000,e2000,e4000,e8000,dir_x,dir_y,dir_z,
// faces,groups. Energies in the units of propagation.h; numbers with 17 significant digits;
// dir = unit vector from the receiver toward where the sound comes from, in the model's axes;
// faces = Geometry face indices in the order the sound meets them, joined by ';'; groups =
// their OBJ group names, joined by ';'. A pair without line of sight simply has no order-0
// row. Files are written to a temporary name and renamed.
#include <string>
#include <vector>

#include "hallwright/diagnostics.h"
#include "hallwright/geometry.h"
#include "hallwright/propagation.h"
#include "hallwright/scene.h"

namespace hallwright {

/* "<source>__<receiver>.csv"; characters other than letters, digits, '.', '-', '_' become '_'. */
std::string PathsCsvFileName(const Scene& scene, int source, int receiver);

/* The CSV text of one (source, receiver) pair: header line, then one row per path. */
std::string FormatPathsCsv(const Scene& scene, const Geometry& geometry, const ReceiverPaths& paths);

/* Writes DIR/paths/<source>__<receiver>.csv for every element of receiverPaths (all of source
   `sourceIndex`); creates DIR/paths. False, with an error naming the file, on failure. */
bool WritePathsCsv(const std::string& dir, const Scene& scene, const Geometry& geometry, int sourceIndex,
                   const std::vector<ReceiverPaths>& receiverPaths, Diagnostics& diag);

}  // namespace hallwright
