// Absorbers behind facings: a porous layer behind an unperforated facing absorbs only the
// sound the facing lets through (limp-mass law, REFERENCES Part A section 6), except near the
// panel's own mass-air-mass resonance, where the panel works as a membrane absorber.
#include <algorithm>
#include <cmath>
#include <limits>

#include "hallwright/air.h"
#include "hallwright/review.h"
#include "review/review_util.h"

namespace hallwright {

namespace {

/* A panel's own losses (damping, edge friction) let it absorb a little even when it passes
   nothing: 0.1 above the transmitted share is accepted (common practice, no source). */
constexpr double kPanelLossAllowance = 0.1;
/* Bands judged: the reporting octaves 125 Hz - 4 kHz (63 Hz and 8 kHz are often extended). */
constexpr int kFirstBand = 1, kLastBand = 6;

}  // namespace

std::vector<Finding> ReviewFacing(const Material& material, const AirConditions& air) {
    if (!material.facingKgM2) return {};
    const double m = *material.facingKgM2;
    const double rho = AirDensity(air);
    const double c = SpeedOfSound(air.temperatureC);
    Finding f;
    f.rule = "facing";
    const double f0 = material.cavityMm && *material.cavityMm > 0
                          ? PanelResonanceHz(m, *material.cavityMm / 1000.0, rho, c)
                          : std::numeric_limits<double>::quiet_NaN();
    const double fHalf = rho * c / (M_PI * m);  // tau = 0.5 here
    if (material.openAreaPct) {
        f.severity = "info";
        f.summary = "material \"" + material.name + "\": perforated facing (" +
                    review::Fixed(*material.openAreaPct, 1) +
                    " % open area) treated as acoustically open; limp-mass check not applied";
        f.values = {{"material", material.name},
                    {"surface_density_kg_m2", m},
                    {"f0_hz", f0},
                    {"open_area_pct", *material.openAreaPct}};
        return {f};
    }
    std::vector<double> bandsHz, tau, alpha, limit, failing;
    for (int b = kFirstBand; b <= kLastBand; ++b) {
        const double fm = ExactMidbandHz(b);
        const double t = LimpMassTransmission(fm, m, rho, c);
        // The membrane resonance may absorb strongly within its own octave band.
        const bool resonant = std::isfinite(f0) && f0 >= BandLowerEdgeHz(b) && f0 < BandUpperEdgeHz(b);
        const double allowed = resonant ? 1.0 : std::min(1.0, t + kPanelLossAllowance);
        bandsHz.push_back(kNominalBandHz[b]);
        tau.push_back(t);
        alpha.push_back(material.absorption[b]);
        limit.push_back(allowed);
        if (material.absorption[b] > allowed + 1e-12) failing.push_back(kNominalBandHz[b]);
    }
    f.values = {{"material", material.name},
                {"surface_density_kg_m2", m},
                {"f0_hz", f0},
                {"half_transmission_hz", fHalf},
                {"bands_hz", bandsHz},
                {"transmission", tau},
                {"alpha_claimed", alpha},
                {"alpha_limit", limit},
                {"failing_bands_hz", failing}};
    if (failing.empty()) {
        f.severity = "info";
        f.summary = "material \"" + material.name + "\": the " + review::Fixed(m, 2) +
                    " kg/m^2 facing passes the absorption the table claims";
        return {f};
    }
    f.severity = "fault";
    std::string bandList;
    for (double hz : failing) bandList += (bandList.empty() ? "" : ", ") + std::to_string(static_cast<int>(hz));
    f.summary = "material \"" + material.name + "\": an unperforated " + review::Fixed(m, 2) +
                " kg/m^2 facing passes half the sound only below " + review::Fixed(fHalf, 0) +
                " Hz, yet the table claims more absorption than it can pass at " + bandList + " Hz";
    f.remedies = {"use a perforated or slotted facing (many small, closely spaced holes) or an "
                  "acoustically open fabric",
                  "use a lighter facing (half transmission at f = rho c / (pi m''))",
                  "replace the table entry with tested data for the faced construction"};
    return {f};
}

std::vector<Finding> ReviewFacings(const Scene& scene) {
    std::vector<Finding> out;
    for (size_t i = 0; i < scene.materials.size(); ++i) {
        for (Finding& f : ReviewFacing(scene.materials[i], scene.air)) {
            // The OBJ groups that use the material.
            std::vector<std::string> groups;
            for (size_t t = 0; t < scene.mesh.triangleMaterial.size(); ++t)
                if (scene.mesh.triangleMaterial[t] == static_cast<int>(i)) {
                    const int g = scene.mesh.triangleGroup[t];
                    if (g >= 0 && g < static_cast<int>(scene.mesh.groupNames.size()))
                        groups.push_back(scene.mesh.groupNames[g]);
                }
            std::sort(groups.begin(), groups.end());
            groups.erase(std::unique(groups.begin(), groups.end()), groups.end());
            f.surfaces = groups;
            out.push_back(std::move(f));
        }
    }
    return out;
}

}  // namespace hallwright
