#pragma once
// Zone statistics and zone differences with honest intervals. Seats share ray batches, so a
// zone mean's standard error cannot come from the seats' own intervals: it is recomputed per
// deleted batch (delete-one-batch jackknife) from the seats' replicate values.
#include <optional>
#include <string>
#include <vector>

namespace hallwright {

/* One seat's value of one parameter in one band, with its B delete-one-batch replicates
   (replicate j = the value recomputed without batch j). Missing = the parameter is refused
   at this seat (e.g. too little decay) and is left out of the zone. */
struct SeatEstimate {
    std::optional<double> value;
    std::vector<double> replicates;  // size B, or empty when value is missing
};

/* Just-noticeable difference of a parameter: absolute (dB, s, ratio) or relative (EDT, T). */
struct Jnd {
    double value = 1.0;
    bool relative = false;  // true: JND = value x the mean of the compared quantities
};

struct ZoneStatistic {
    int nSeats = 0;                     // seats with a value
    double mean = 0, sd = 0, min = 0, max = 0;
    double ci95 = 0;                    // half-width of the 95 % interval of the mean (MC noise)
    std::vector<double> replicateMeans; // zone mean per deleted batch
};

struct ZoneDifference {
    double difference = 0;      // mean(a) - mean(b), in the parameter's unit
    double differenceJnd = 0;   // the same in JNDs
    double ci95Jnd = 0;         // half-width of its 95 % interval, in JNDs
};

/* Student t quantile t(0.975, dof) for the jackknife interval (2.365 for dof = 7). */
double StudentT975(int dof);
/* Jackknife standard error from B delete-one replicates: sqrt((B-1)/B sum (x_j - mean)^2). */
double JackknifeStandardError(const std::vector<double>& replicates);

/* Statistics of one zone's seats; nSeats = 0 when no seat has a value. Seats with a missing
   or non-finite value or replicate are left out (nSeats counts the seats used). */
ZoneStatistic SummarizeZone(const std::vector<SeatEstimate>& seats);
/* Difference of two zone statistics (with replicates), expressed in JNDs. */
std::optional<ZoneDifference> CompareZones(const ZoneStatistic& a, const ZoneStatistic& b, const Jnd& jnd);

}  // namespace hallwright
