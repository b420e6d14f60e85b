// The built-in materials library, compiled in. The same text is shipped as
// engine/materials/builtin.csv; the test MaterialTable.BuiltinCsvFileMatchesCompiledText keeps
// the two identical (edit builtin.csv, then paste it between the raw-string markers below).
#include "materials/builtin_materials.h"

namespace hallwright {

const char kBuiltinMaterialsPath[] = "<built-in materials>";

const char kBuiltinMaterialsCsv[] = R"CSV(# hallwright built-in library of generic materials (used after the scene's own tables).
# Absorption: typical textbook values from memory of Everest, Master Handbook of Acoustics, and
# Egan, Architectural Acoustics (1988), which reproduce the same compilation; digits may be off
# by about +-0.02..0.05. Seating and audience: from memory of Beranek & Hidaka, JASA 104 (1998)
# 3169 and Beranek 2004, per acoustical seating area incl. a 0.5 m edge strip. These are
# Sabine coefficients derived in halls: in a geometric (ray/image) model, or with Eyring, they
# make T too short. Porous and perforated absorbers: computed from Delany & Bazley 1970 (random
# incidence by Paris averaging, locally reacting), see REFERENCES.md Part A section 5.
# Scattering coefficients: common practice, no source (audience range from memory of
# Vorlaender, Auralization 2008); treat them as sensitivity parameters.
# 63 Hz and 8 kHz are not given: the extension rule (125 Hz and 4 kHz values) fills them in.
# REPLACE THESE WITH TESTED DATA (ISO 354 / ISO 17497-1) FOR THE PRODUCTS ACTUALLY SPECIFIED.
material,a125,a250,a500,a1k,a2k,a4k,s125,s250,s500,s1k,s2k,s4k,facing_kg_m2,open_area_pct,cavity_mm,note
concrete,0.01,0.01,0.015,0.02,0.02,0.02,0.05,0.05,0.05,0.05,0.05,0.05,,,,"poured concrete / concrete floor; Everest, Egan (from memory)"
concrete_block_painted,0.10,0.05,0.06,0.07,0.09,0.08,0.05,0.05,0.05,0.10,0.10,0.15,,,,"painted concrete block; Everest, Egan (from memory)"
plaster,0.013,0.015,0.02,0.03,0.04,0.05,0.05,0.05,0.05,0.05,0.05,0.05,,,,"smooth plaster on brick or tile; Everest, Egan (from memory)"
plaster_on_lath,0.14,0.10,0.06,0.05,0.04,0.03,0.05,0.05,0.05,0.05,0.05,0.05,,,,"plaster on lath; Everest, Egan (from memory)"
glass_heavy,0.18,0.06,0.04,0.03,0.02,0.02,0.05,0.05,0.05,0.05,0.05,0.05,,,,"large heavy plate glass; Everest, Egan (from memory)"
glass_window,0.35,0.25,0.18,0.12,0.07,0.04,0.05,0.05,0.05,0.05,0.05,0.05,,,,"ordinary window glass; Everest, Egan (from memory)"
timber_panelling,0.28,0.22,0.17,0.09,0.10,0.11,0.05,0.05,0.05,0.10,0.10,0.10,,,,"plywood panelling 10 mm; Everest, Egan (from memory)"
timber_floor,0.15,0.11,0.10,0.07,0.06,0.07,0.05,0.05,0.05,0.05,0.10,0.10,,,,"wood floor; Everest, Egan (from memory)"
stage_floor_timber,0.15,0.11,0.10,0.07,0.06,0.07,0.05,0.05,0.05,0.05,0.10,0.10,,,,"timber stage floor on joists; wood-floor row of Everest, Egan (from memory)"
carpet_on_concrete,0.02,0.06,0.14,0.37,0.60,0.65,0.05,0.05,0.10,0.10,0.15,0.20,,,,"heavy carpet on concrete; Everest, Egan (from memory)"
carpet_on_underlay,0.08,0.24,0.57,0.69,0.71,0.73,0.05,0.05,0.10,0.10,0.15,0.20,,,,"heavy carpet on foam or felt underlay; Everest, Egan (from memory)"
velour_flat,0.03,0.04,0.11,0.17,0.24,0.35,0.05,0.05,0.10,0.10,0.15,0.20,,,,"light velour 340 g/m2 hung flat on the wall; Everest, Egan (from memory)"
curtains,0.07,0.31,0.49,0.75,0.70,0.60,0.10,0.15,0.20,0.30,0.40,0.50,,,,"medium velour 475 g/m2 draped to half area; Everest, Egan (from memory)"
curtains_heavy,0.14,0.35,0.55,0.72,0.70,0.65,0.10,0.15,0.20,0.30,0.40,0.50,,,,"heavy velour 610 g/m2 draped to half area; Everest, Egan (from memory)"
seating_occupied,0.76,0.83,0.88,0.91,0.91,0.89,0.30,0.40,0.50,0.60,0.70,0.70,,,,"heavily upholstered seats, occupied; Beranek & Hidaka 1998 (from memory); Sabine-derived hall data, makes a geometric model's T short"
audience,0.76,0.83,0.88,0.91,0.91,0.89,0.30,0.40,0.50,0.60,0.70,0.70,,,,"seated audience on upholstered seats (= seating_occupied); Beranek & Hidaka 1998 (from memory); Sabine-derived hall data, makes a geometric model's T short"
seating_unoccupied,0.70,0.76,0.81,0.84,0.84,0.81,0.30,0.40,0.50,0.60,0.70,0.70,,,,"heavily upholstered seats, unoccupied; Beranek & Hidaka 1998 (from memory); Sabine-derived hall data, makes a geometric model's T short"
seating_medium_unoccupied,0.54,0.62,0.68,0.70,0.68,0.66,0.30,0.40,0.50,0.60,0.70,0.70,,,,"medium upholstered seats, unoccupied; Beranek & Hidaka 1998 (from memory); Sabine-derived hall data, makes a geometric model's T short"
porous_absorber_50mm,0.061,0.236,0.517,0.772,0.926,0.880,0.05,0.05,0.05,0.10,0.10,0.10,,,,"50 mm porous layer (flow resistivity 10 kPa s/m2) on a rigid wall; Delany & Bazley 1970, random incidence (computed, REFERENCES A5)"
perforated_panel_absorber,0.061,0.236,0.517,0.772,0.926,0.880,0.05,0.05,0.05,0.10,0.10,0.10,,20,,"perforated facing with 20 % open area over porous_absorber_50mm; treated as acoustically transparent (>= 20 % open area rule, from memory, no source), so the porous values apply"
plywood_panel_absorber,0.28,0.22,0.17,0.09,0.10,0.11,0.05,0.05,0.05,0.10,0.10,0.10,5.4,,100,"9 mm plywood (5.4 kg/m2) on a 100 mm cavity; coefficients of the plywood panelling row of Everest, Egan (from memory); panel resonance 60/sqrt(m D) = 82 Hz"
)CSV";

}  // namespace hallwright
