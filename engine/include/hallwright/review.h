#pragma once
// Design review: the classic faults of a hall found on the drawings, from geometry and the
// materials table alone (flutter between parallel hard surfaces, focusing by concave surfaces,
// deep balcony overhangs, absorbers behind facings that cannot pass sound) and, when specular
// paths are given, late strong reflections (echoes). Findings depend on the geometry, not on
// OBJ group names, and do not change when the model is rotated about the vertical, mirrored,
// regrouped or exported z-up. Distances are in metres; points in model coordinates.
#include <optional>
#include <string>
#include <utility>
#include <variant>
#include <vector>

#include "hallwright/diagnostics.h"
#include "hallwright/geometry.h"
#include "hallwright/material.h"
#include "hallwright/propagation.h"
#include "hallwright/scene.h"

namespace hallwright {

enum class Venue { kConcert, kTheatre };

struct ReviewOptions {
    Venue venue = Venue::kConcert;    // concert halls have the stricter overhang limit
    double flutterMaxAngleDeg = 3.0;  // common practice, no source (issue 10)
};

/* A value of a finding: a number, a text, a list of numbers (a point is [x, y, z]) or a list
   of names (e.g. seats). */
using FindingValue = std::variant<double, std::string, std::vector<double>, std::vector<std::string>>;

struct Finding {
    std::string rule;      // "flutter" | "echo" | "focusing" | "overhang" | "facing"
    std::string severity;  // "info" (passes its guideline) | "warning" | "fault"
    std::string summary;
    std::vector<std::string> surfaces;  // OBJ groups concerned (for reading only)
    std::vector<std::string> seats;     // receivers concerned
    std::vector<std::pair<std::string, FindingValue>> values;  // documented per rule
    std::vector<std::string> remedies;

    /* The value stored under `key`, or nullptr. */
    const FindingValue* Value(const std::string& key) const;
    /* A numeric value, or NaN when absent or not a number. */
    double Number(const std::string& key) const;
    /* A list value (e.g. a point), or an empty list. */
    std::vector<double> List(const std::string& key) const;
    /* A list of names, or an empty list. */
    std::vector<std::string> Names(const std::string& key) const;
};

/* Review options from the scene's [review] keys. */
ReviewOptions ReviewOptionsFrom(const Scene& scene);

/* Limp-mass transmission of an unperforated facing at normal incidence,
   tau = 1 / (1 + (pi f m'' / (rho c))^2) (REFERENCES Part A section 6). */
double LimpMassTransmission(double frequencyHz, double surfaceDensityKgM2, double rho, double c);
/* Mass-air-mass resonance of a panel over a cavity, f0 = (c / 2 pi) sqrt(rho / (m'' d)). */
double PanelResonanceHz(double surfaceDensityKgM2, double cavityM, double rho, double c);
/* Density of air, rho = p / (R T) with R = 287.05 J/(kg K). */
double AirDensity(const AirConditions& air);

/* Flutter: opposing hard planar surfaces closer to parallel than the threshold. */
std::vector<Finding> ReviewFlutter(const Scene& scene, const Geometry& geometry, const ReviewOptions& options);
/* Balcony overhangs over the seats: depth D and opening height H against the venue limit. */
std::vector<Finding> ReviewOverhangs(const Scene& scene, const Geometry& geometry, const ReviewOptions& options);
/* Absorbers behind facings: the table's absorption against what the facing can pass. */
std::vector<Finding> ReviewFacings(const Scene& scene);
/* One material's facing check (surfaces left empty). */
std::vector<Finding> ReviewFacing(const Material& material, const AirConditions& air);
/* Focusing: concave patches of facets, their centre and radius, and where they focus. */
std::vector<Finding> ReviewFocusing(const Scene& scene, const Geometry& geometry, const ReviewOptions& options);
/* Echoes: late strong specular arrivals judged by Dietsch & Kraak 1986 on the predicted
   response: the specular paths plus, when given, the tracer's histograms of the same
   (source, receiver) pairs (the diffuse part, which masks late arrivals). */
std::vector<Finding> ReviewEchoes(const Scene& scene, const Geometry& geometry,
                                  const std::vector<ReceiverPaths>& paths, const ReviewOptions& options,
                                  const std::vector<ReceiverHistogram>* diffuse = nullptr);

/* Every rule that needs no simulation run (echo included only when `paths` is given). */
std::vector<Finding> ReviewRoom(const Scene& scene, const Geometry& geometry, const ReviewOptions& options,
                                const std::vector<ReceiverPaths>* paths = nullptr,
                                const std::vector<ReceiverHistogram>* diffuse = nullptr);

/* review.json text: {"findings": [...]} with the keys of issue 10. */
std::string FindingsToJson(const std::vector<Finding>& findings);

// ---- Evidence from a finished run (`hallwright review SCENE --run DIR`) ----
//
// Values added to the findings (review.json) when a run is given:
//  flutter: "ir_evidence" ("confirmed" | "not confirmed" | "no IRs of these seats" |
//    "no seats between the surfaces"; checked: the seats between, or every seat (at most 32,
//    in scene order) for a passing pair, which lists none),
//    "checked_seats" [names], "confirmed_seats" [names] (seats whose own late-envelope
//    autocorrelation shows the peak; reported, not required), "autocorrelation_peak"
//    (confirmed when it exceeds the threshold: peak of the seats' mean
//    normalised autocorrelation within max(1 ms, 5 %) of 2d/c), "autocorrelation_lag_s" (its
//    lag), "autocorrelation_threshold" (99th percentile of that mean autocorrelation over lags
//    0.5-1.5 x 2d/c outside the peak window), "autocorrelation_seat_peaks" and
//    "autocorrelation_seat_lags_s" (per checked seat, same order).
//    Severity: confirmed turns "warning" into "fault" and "info" into "warning"; not
//    confirmed keeps the geometric severity, the summary says the IRs do not show it.
//  focusing: "run_paths" ("yes" | "no: the run has no paths; rerun simulate with --paths"),
//    "concentration_db" (energy of the specular paths that meet the concave surface, 1 kHz
//    octave, mean over the focal seats, over the mean of the seats of their zone(s), dB),
//    "concentration_seats" [the focal seats], "concentration_seat_db" (per focal seat, same
//    order), "concentration_band_hz" (1000). Severity unchanged.
//  echo: with run paths, the echo rule reads the run's specular paths instead of recomputing
//    image sources (same values as without a run).

/* Late-envelope flutter analysis of one mono IR (see run_evidence.cpp for the method). */
struct FlutterEvidence {
    bool analysed = false;  // false: the late part is too short (note says why)
    std::string note;
    double windowStartS = 0, windowEndS = 0;  // analysed part, from emission
    double lagStepS = 0;                      // lag spacing of `autocorrelation`
    double decayDbPerS = 0;                   // fitted decay of the late part (negative)
    std::vector<double> autocorrelation;      // normalised, lags 0 .. 1.5 x period
    double peak = 0, lagS = 0, threshold = 0; // see the values above
    bool confirmed = false;                   // peak > threshold and peak > 0
};

/* Flutter evidence of a mono IR (samples from emission) for the repetition period 2d/c. */
FlutterEvidence FlutterFromImpulseResponse(const std::vector<float>& samples, int sampleRate, double directDelayS,
                                           double periodS);
/* Peak, lag and threshold of an autocorrelation (lag step `lagStepS`) around `periodS`. */
void FlutterPeak(const std::vector<double>& autocorrelation, double lagStepS, double periodS, FlutterEvidence& out);

/* A finished run's files, matched to the scene. */
struct RunEvidence {
    std::string dir;
    bool hasPaths = false;             // DIR/paths exists (`simulate --paths`)
    std::vector<ReceiverPaths> paths;  // every (source, receiver) pair with a paths file
    /* Mono IR file of each (source, receiver) pair, "" when the run has none. */
    std::vector<std::vector<std::string>> monoIr;  // [source][receiver]
};

/* Reads DIR/paths/<source>__<seat>.csv (paths_csv.h) back into specular paths (internal
   frame); errors name file:line. */
std::optional<ReceiverPaths> ParsePathsCsv(const std::string& text, const std::string& path, const Scene& scene,
                                           const Geometry& geometry, int source, int receiver, Diagnostics& diag);
/* Checks DIR against the scene (DIR exists, run.json's scene SHA-256 equals the scene file's,
   mono IRs present) and reads its paths; errors name the file and the fix. */
std::optional<RunEvidence> ReadRunEvidence(const std::string& dir, const Scene& scene, const Geometry& geometry,
                                           Diagnostics& diag);
/* Reflected specular energy per receiver (1 kHz octave) of the paths of `source` that meet
   any of `faces`, in dB over the mean of the receivers of the same zone; NaN for receivers
   without paths. */
std::vector<double> SpecularConcentrationDb(const Scene& scene, const std::vector<ReceiverPaths>& paths, int source,
                                            const std::vector<int>& faces);
/* Adds the run's evidence to flutter and focusing findings (values documented above). */
void AddRunEvidence(std::vector<Finding>& findings, const Scene& scene, const Geometry& geometry,
                    const RunEvidence& run, Diagnostics& diag);

}  // namespace hallwright
