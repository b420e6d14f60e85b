#pragma once
// Design review: the classic faults of a hall found on the drawings, from geometry and the
// materials table alone (flutter between parallel hard surfaces, focusing by concave surfaces,
// deep balcony overhangs, absorbers behind facings that cannot pass sound) and, when specular
// paths are given, late strong reflections (echoes). Findings depend on the geometry, not on
// OBJ group names, and do not change when the model is rotated about the vertical, mirrored,
// regrouped or exported z-up. Distances are in metres; points in model coordinates.
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

/* A value of a finding: a number, a text, or a list of numbers (a point is [x, y, z]). */
using FindingValue = std::variant<double, std::string, std::vector<double>>;

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

}  // namespace hallwright
