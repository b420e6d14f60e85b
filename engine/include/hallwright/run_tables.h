#pragma once
// The run's summary tables (seats.csv, zones.csv, zone-differences.csv), computed from the
// per-seat parameter tables; zone intervals use the per-batch replicates (zones.h).
#include <string>
#include <vector>

#include "hallwright/diagnostics.h"
#include "hallwright/metrics.h"
#include "hallwright/scene.h"

namespace hallwright {

/* The parameters of one (source, receiver) pair of a run. */
struct SeatResult {
    int source = 0, receiver = 0;
    bool directOccluded = false;
    ParameterTable table;
};

/* Single-number columns of seats.csv, in order (each followed by `<name>_ci95`). */
inline const std::vector<std::string> kSeatColumns = {"EDT_M", "T30_M", "C80_M", "D50_M",
                                                      "Ts_M",  "G_M",   "LF_M",  "STI"};
/* Parameters summarised per zone (per reported band, plus the single numbers). */
inline const std::vector<std::string> kZoneParameters = {"EDT", "T20", "T30", "C50", "C80", "D50",
                                                         "Ts",  "G",   "LF",  "LFC", "STI"};

/* seats.csv: source,receiver,zone,x,y,z,direct_occluded,EDT_M,EDT_M_ci95,... (model axes). */
std::string FormatSeatsCsv(const Scene& scene, const std::vector<SeatResult>& seats);
/* zones.csv: source,zone,parameter,band,n_seats,mean,sd,min,max,ci95. */
std::string FormatZonesCsv(const Scene& scene, const std::vector<SeatResult>& seats);
/* zone-differences.csv: source,zone_a,zone_b,parameter,band,difference,difference_jnd,ci95_jnd. */
std::string FormatZoneDifferencesCsv(const Scene& scene, const std::vector<SeatResult>& seats);

/* Writes text to path through a temporary file and a rename; error names the file. */
bool WriteTextFileAtomic(const std::string& path, const std::string& text, Diagnostics& diag);
/* Shortest text that reads back as the same double ("%.17g" trimmed), "" for NaN. */
std::string FormatNumber(double v, int significantDigits = 6);

}  // namespace hallwright
