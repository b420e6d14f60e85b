#pragma once
// Surface materials: random-incidence absorption (ISO 354) and scattering (ISO 17497-1)
// coefficients per octave band, plus optional construction data for the design review.
#include <optional>
#include <string>
#include <vector>

#include "hallwright/bands.h"
#include "hallwright/diagnostics.h"

namespace hallwright {

struct Material {
    std::string name;
    Bands absorption = Bands::Zero();  // alpha per band, 63 Hz - 8 kHz, within [0, 1]
    Bands scattering = Bands::Zero();  // s per band, within [0, 1]
    std::optional<double> facingKgM2;  // surface density of a facing over the absorber
    std::optional<double> openAreaPct; // open area of a perforated facing
    std::optional<double> cavityMm;    // depth of the air cavity behind the facing
    std::string note;
    SourceLoc definedAt;               // table file and line
    bool extended63 = false;           // 63 Hz value filled in by the extension rule
    bool extended8k = false;           // 8 kHz value filled in by the extension rule
};

/* A materials table read from CSV (see README "The materials table"). */
struct MaterialTable {
    std::string path;
    std::vector<Material> materials;
    const Material* Find(const std::string& name) const;
};

/* Parses a materials CSV given as text; `path` is used in messages only. */
MaterialTable ParseMaterialTable(const std::string& text, const std::string& path, Diagnostics& diag);
/* Reads and parses a materials CSV file. */
MaterialTable ReadMaterialTable(const std::string& path, Diagnostics& diag);
/* The built-in library of generic materials (engine/materials/builtin.csv, compiled in). */
const MaterialTable& BuiltinMaterials();

}  // namespace hallwright
