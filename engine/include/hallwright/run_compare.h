#pragma once
// Two runs of the same hall compared seat by seat and zone by zone in JNDs (`hallwright
// compare`). Reads the run's parameters.csv and seats.csv (formats of run_tables.h and
// parameters_csv.h). Seats are matched by name, else by position within a tolerance.
#include <optional>
#include <string>
#include <vector>

#include "hallwright/diagnostics.h"
#include "hallwright/mesh.h"

namespace hallwright {

struct RunParameter {
    std::string source, receiver, zone, parameter, unit, note;
    int band = 0;  // nominal Hz, 0 = avg
    std::optional<double> value, ci95;
    int line = 0;
};

struct RunSeat {
    std::string source, receiver, zone;
    Vec3 position = Vec3::Zero();  // model units and axes
    bool directOccluded = false;
    int line = 0;
};

struct RunTables {
    std::string dir;
    std::vector<RunParameter> parameters;
    std::vector<RunSeat> seats;
    double metresPerUnit = 1.0;  // from run.json mesh.units when present, else metres
    std::string modelUp;         // from run.json mesh.up ("y" or "z"), "" when unknown
};

/* Reads DIR/parameters.csv and DIR/seats.csv; errors name file:line and the fix. */
std::optional<RunTables> ReadRun(const std::string& dir, Diagnostics& diag);

/* Change of one parameter at one seat, b - a. */
struct SeatChange {
    std::string source, receiver, receiverB, zone, parameter;
    int band = 0;
    double a = 0, b = 0, difference = 0, differenceJnd = 0, ci95Jnd = 0;
    bool matchedByPosition = false;
    Vec3 position = Vec3::Zero();  // run A's position (model units)
};

/* Change of one parameter's zone mean over the matched seats, b - a. */
struct ZoneChange {
    std::string source, zone, parameter;
    int band = 0;
    int nSeats = 0;
    double a = 0, b = 0, difference = 0, differenceJnd = 0, ci95Jnd = 0;
};

struct RunComparison {
    std::vector<SeatChange> seats;
    std::vector<ZoneChange> zones;
    std::vector<std::string> unmatchedA, unmatchedB;  // "source/receiver"
    int matchedByName = 0, matchedByPosition = 0;
    std::string modelUp;  // run A's up axis, for the map ("" = guessed from the seats)
};

struct CompareOptions {
    double positionToleranceM = 0.05;
};

/* Matches the seats of two runs and expresses every change in JNDs (metrics.h kJndTable; a
   relative JND uses the mean of the two values). Seat intervals: the two runs' ci95 combined
   in quadrature (independent runs). Zone intervals: per run the mean of the seats' ci95, an
   upper bound since seats of one run share ray batches, then combined in quadrature. */
RunComparison CompareRuns(const RunTables& a, const RunTables& b, const CompareOptions& options);

/* compare.csv: source,receiver,zone,parameter,band,a,b,difference,difference_jnd,ci95_jnd
   (zone rows have receiver "(zone mean)"). */
std::string FormatCompareCsv(const RunComparison& c);
/* One sentence per zone: the changes of the single numbers larger than one JND. */
std::vector<std::string> ZoneChangeSentences(const RunComparison& c);
/* compare.html: map of the change at each seat (parameter selector) and the zone sentences. */
std::string RenderCompareReport(const RunComparison& c, const std::string& nameA, const std::string& nameB);

}  // namespace hallwright
