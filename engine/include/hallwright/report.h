#pragma once
// The client report: one self-contained HTML page (inline CSS, SVG and script, no external
// resource) with the seat map, the zone comparison in JNDs with plain sentences, decay curves,
// reverberation times against Sabine and Eyring, design findings, warnings and cautions.
//
// ReportInput holds plain values. MakeReportInput fills geometry, seats, zone statistics and
// differences from a run's SeatResults; the caller adds curves, findings and warnings.
// Plan coordinates (metres): `u` along the hall's main axis (first source toward the seats'
// centroid, horizontal), `v` = u x up, so that the plan seen from above is not mirrored.
#include <array>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "hallwright/geometry.h"
#include "hallwright/propagation.h"
#include "hallwright/room_acoustics.h"
#include "hallwright/run_tables.h"
#include "hallwright/scene.h"

namespace hallwright {

/* Parameters a seat map can be coloured by (band 0 = single number: C80_M ... , STI). */
inline const std::vector<std::string> kReportParameters = {"C80", "D50", "G", "EDT", "T30", "STI", "LF"};

/* One value of a seat: parameter base name, band (nominal Hz, 0 = single number). */
struct ReportValue {
    std::string parameter;
    int band = 0;
    std::optional<double> value, ci95;
};

struct ReportSeat {
    std::string name, zone;
    Vec3 model = Vec3::Zero();          // position in model units and axes (labels)
    double u = 0, v = 0, height = 0;    // plan coordinates and height (metres, internal frame)
    bool underOverhang = false;         // a surface above with room space above it
    bool upperLevel = false;            // its floor has room space below (a balcony)
    /* Per source (index into ReportInput::sources): values and the occlusion flag. */
    std::vector<std::vector<ReportValue>> values;
    std::vector<char> directOccluded;

    /* The value for (source, parameter, band), or nullptr. */
    const ReportValue* Find(int source, const std::string& parameter, int band) const;
};

using PlanPoint = std::array<double, 2>;

struct ReportGeometry {
    std::vector<std::vector<PlanPoint>> floors;       // upward-facing triangles in plan (u, v)
    std::vector<std::array<PlanPoint, 2>> walls;      // near-vertical triangles as plan segments
    std::vector<std::pair<std::string, PlanPoint>> sources;  // source names and plan positions
    PlanPoint planMin{0, 0}, planMax{1, 1};
    /* Section through the seats under an overhang (vertical plane v = sectionV). */
    bool hasSection = false;
    double sectionV = 0, sectionHalfWidthM = 1.0;     // seats within this distance are shown
    std::vector<std::array<PlanPoint, 2>> sectionSegments;  // (u, height) pairs
    PlanPoint sectionMin{0, 0}, sectionMax{1, 1};
};

struct ReportZoneStat {
    int source = 0;
    std::string zone, parameter;  // parameter base name; band 0 = single number
    int band = 0;
    int nSeats = 0;
    double mean = 0, sd = 0, min = 0, max = 0, ci95 = 0;
};

struct ReportZoneDifference {
    int source = 0;
    std::string zoneA, zoneB, parameter;  // difference = mean(zoneA) - mean(zoneB)
    int band = 0;
    double difference = 0, differenceJnd = 0, ci95Jnd = 0;
    double meanA = 0, meanB = 0;
};

/* Schroeder decay curve and energy-time curve of one seat, per band. */
struct SeatCurves {
    std::string source, receiver, zone;
    std::vector<double> timeS;  // bin start times (1 ms bins from emission)
    struct Band {
        int hz = 0;
        std::vector<double> etcDb;        // energy per bin, dB re the band's largest bin
        std::vector<double> schroederDb;  // backward integral, dB re the total energy
    };
    std::vector<Band> bands;
};

/* One rendered listening file: the dry recording through a seat's IR (listening.h). */
struct ReportListening {
    std::string source, seat, zone;
    std::string file;       // relative to the report (e.g. "listening/<source>__<seat>.wav")
    std::string layout;     // "binaural-lr" (headphones) or "mono"
    double peakDbfs = 0;    // its largest sample
};

struct ReportInput {
    std::string title;
    std::string programVersion;         // e.g. "hallwright 0.1.0"
    std::vector<std::string> sources;   // source names
    std::vector<std::string> zones;     // zone order (first appearance)
    std::vector<int> reportedBandsHz = {125, 250, 500, 1000, 2000, 4000};
    ReportGeometry geometry;
    std::vector<ReportSeat> seats;      // one per receiver
    std::vector<ReportZoneStat> zoneStats;
    std::vector<ReportZoneDifference> zoneDifferences;
    std::optional<RoomEstimates> room;
    std::vector<SeatCurves> curves;
    std::string findingsJson;           // review.json text ({"findings": [...]}) or an array; "" = none
    std::vector<std::string> warnings;
    int raysPerSource = 0;              // for the cautions (0 = not shown)
    /* Listening files (simulate --listen); empty = no listening section content. */
    std::vector<ReportListening> listening;
    std::string listeningDry;           // the dry recording's file name
    double listeningGainDb = 0;         // the one gain applied to every listening file
};

/* Plan outline, sources and the balcony section from the model (internal frame, metres). */
ReportGeometry ReportGeometryFrom(const Scene& scene, const Geometry& geometry);
/* Seats, zone statistics (jackknife, zones.h) and zone differences in JNDs from a run. */
ReportInput MakeReportInput(const Scene& scene, const Geometry& geometry,
                            const std::vector<SeatResult>& seats, const RoomEstimates& room);

/* Curves of one seat: specular paths binned at 1 ms plus the tracer mean over batches; the
   Schroeder (1965) backward integral of that sum, no tail compensation. `bands` = band
   indices (default 500, 1000, 2000 Hz). */
SeatCurves CurvesFromHistogram(const ReceiverPaths& paths, const ReceiverHistogram& hist,
                               const std::vector<int>& bands = {3, 4, 5});

/* The whole report page. */
std::string RenderReport(const ReportInput& input);

/* One plain-language sentence for a zone difference larger than one JND, "" otherwise. */
std::string DifferenceSentence(const ReportZoneDifference& d);

// ---- helpers shared with `compare` (and tested) ----

/* Text safe for HTML content and attribute values (& < > " ' escaped). */
std::string HtmlEscape(std::string_view text);
/* Sequential colour ramp (dark blue through violet and rose to amber, OKLab lightness rising
   linearly): 256 entries "#rrggbb", entry 0 darkest. */
const std::array<std::string, 256>& SequentialRamp();
/* Diverging ramp for changes: blue (negative) through light grey (0) to amber (positive),
   lightness falling symmetrically from the centre; entry 128 is the centre. */
const std::array<std::string, 256>& DivergingRamp();
/* Ramp entry for a value in [lo, hi] (clamped; index = floor(255 t + 0.5)). */
int RampIndex(double value, double lo, double hi);
/* OKLab lightness (0..1) of a "#rrggbb" colour (Ottosson 2020 OKLab). */
double OklabLightness(const std::string& hex);
/* Display unit of a parameter: "s", "dB", "" (ratio/index). */
std::string ParameterUnit(const std::string& parameter);

}  // namespace hallwright
