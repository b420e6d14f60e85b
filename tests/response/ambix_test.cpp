// Tests of first-order AmbiX synthesis (SynthesizeAmbix in engine/response/synthesis.cpp).
#include <gtest/gtest.h>

#include <cmath>
#include <numbers>
#include <random>

#include "hallwright/response.h"
#include "response/band_analysis.h"

namespace hw_test = hallwright::test;

namespace {

constexpr double kPi = std::numbers::pi;
constexpr int kFs = 48000;

/* Internal-frame direction of head-frame azimuth/elevation for facing +x, up +y:
   left = up x front = -z (a right-handed frame). */
hw::Vec3 HeadDirection(double azDeg, double elDeg) {
    const double az = azDeg * kPi / 180, el = elDeg * kPi / 180;
    const hw::Vec3 front(1, 0, 0), left(0, 0, -1), up(0, 1, 0);
    return std::cos(el) * std::cos(az) * front + std::cos(el) * std::sin(az) * left + std::sin(el) * up;
}

hw::ReceiverHistogram Histogram(int bins) {
    hw::ReceiverHistogram h;
    h.binCount = bins;
    h.energy.assign(static_cast<size_t>(hw::kBatchCount) * bins * hw::kBandCount, 0.0f);
    h.directionEnergy.assign(static_cast<size_t>(hw::DirectionBinCount(bins)) * hw::kDirectionCells, 0.0f);
    return h;
}

hw::SynthesisContext Context(double volume) {
    hw::SynthesisContext ctx;
    ctx.sampleRate = kFs;
    ctx.roomVolumeM3 = volume;
    ctx.speedOfSound = 343.0;
    ctx.seed = 5;
    return ctx;
}

/* Energy-weighted channel gain of channel c relative to W: sum(ch_c W) / sum(W^2). */
double Gain(const hw::ImpulseResponse& ir, int c) {
    double num = 0, den = 0;
    for (size_t n = 0; n < ir.FrameCount(); ++n) {
        const double w = ir.samples[n * 4], x = ir.samples[n * 4 + c];
        num += x * w;
        den += w * w;
    }
    return num / den;
}

std::vector<float> Channel(const hw::ImpulseResponse& ir, int c) {
    std::vector<float> out(ir.FrameCount());
    for (size_t n = 0; n < out.size(); ++n) out[n] = ir.samples[n * ir.channels + c];
    return out;
}

/* Exponential tail (T = 1.2 s) from 20 ms on, equal in all bands. */
void FillTail(hw::ReceiverHistogram& h, double level) {
    for (int k = 20; k < h.binCount; ++k)
        for (int batch = 0; batch < hw::kBatchCount; ++batch)
            for (int b = 0; b < hw::kBandCount; ++b)
                h.energy[(static_cast<size_t>(batch) * h.binCount + k) * hw::kBandCount + b] =
                    static_cast<float>(level * std::exp(-13.8155 * k * 1e-3 / 1.2));
}

}  // namespace

// Plane waves: W, Y, Z, X gains equal the AmbiX ACN/SN3D first-order encoding
// (Nachbar et al. 2011; REFERENCES Part B 7.1 table).
TEST(AmbixEncoding, PlaneWaveGainsMatchSpecification) {
    struct Case { double az, el, y, z, x; };
    const Case cases[] = {{0, 0, 0, 0, 1},          {90, 0, 1, 0, 0},   {-90, 0, -1, 0, 0},
                          {180, 0, 0, 0, -1},       {0, 90, 0, 1, 0},   {45, 0, 0.70711, 0, 0.70711},
                          {30, 20, 0.46985, 0.34202, 0.81380},          {-120, -30, -0.75, -0.5, -0.43301}};
    for (const Case& c : cases) {
        hw::ReceiverPaths paths;
        hw::SpecularPath p;
        p.delayS = 0.05;
        p.energy = hw::Bands::Constant(1e-3);
        p.arrivalFrom = HeadDirection(c.az, c.el);
        paths.paths.push_back(p);
        hw::SynthesisContext ctx = Context(1000);
        ctx.lengthS = 0.2;
        hw::Diagnostics diag;
        const hw::ImpulseResponse ir = hw::SynthesizeAmbix(paths, Histogram(0), ctx, hw::Vec3(1, 0, 0), diag);
        ASSERT_FALSE(diag.HasErrors()) << diag.ToString();
        ASSERT_EQ(ir.channels, 4);
        EXPECT_EQ(ir.layout, "ambix-acn-sn3d");
        EXPECT_NEAR(Gain(ir, 1), c.y, 2e-5) << c.az << "," << c.el;
        EXPECT_NEAR(Gain(ir, 2), c.z, 2e-5) << c.az << "," << c.el;
        EXPECT_NEAR(Gain(ir, 3), c.x, 2e-5) << c.az << "," << c.el;
    }
}

// Turning the seat's facing by 90 degrees (toward -z, i.e. to the right in this frame)
// moves an arrival from +x (was frontal) to the listener's left: Y = 1, X = 0.
TEST(AmbixEncoding, TurningFacingMovesFrontalArrivalToTheSide) {
    hw::ReceiverPaths paths;
    hw::SpecularPath p;
    p.delayS = 0.05;
    p.energy = hw::Bands::Constant(1e-3);
    p.arrivalFrom = hw::Vec3(1, 0, 0);
    paths.paths.push_back(p);
    hw::SynthesisContext ctx = Context(1000);
    ctx.lengthS = 0.2;
    hw::Diagnostics diag;
    const auto front = hw::SynthesizeAmbix(paths, Histogram(0), ctx, hw::Vec3(1, 0, 0), diag);
    const auto turned = hw::SynthesizeAmbix(paths, Histogram(0), ctx, hw::Vec3(0, 0, -1), diag);
    ASSERT_FALSE(diag.HasErrors());
    EXPECT_NEAR(Gain(front, 3), 1, 1e-5);
    EXPECT_NEAR(Gain(front, 1), 0, 1e-5);
    // Facing -z: left = up x front = (0,1,0) x (0,0,-1) = (-1,0,0), so +x is on the right.
    EXPECT_NEAR(Gain(turned, 1), -1, 1e-5);
    EXPECT_NEAR(Gain(turned, 3), 0, 1e-5);
}

// W is the mono IR, sample for sample (same Dirac sequence, same calibration).
TEST(AmbixDiffuse, OmniChannelEqualsMonoIr) {
    hw::ReceiverHistogram h = Histogram(400);
    FillTail(h, 1e-5);
    std::fill(h.directionEnergy.begin(), h.directionEnergy.end(), 1.0f);
    hw::Diagnostics diag;
    const auto ambix = hw::SynthesizeAmbix({}, h, Context(2000), hw::Vec3(1, 0, 0), diag);
    const auto mono = hw::Synthesize({}, h, Context(2000), diag);
    ASSERT_FALSE(diag.HasErrors());
    EXPECT_EQ(Channel(ambix, 0), mono.samples);
}

// An isotropic tail: X, Y and Z each carry one third of W's energy (E[x^2] = 1/3 on the unit
// sphere). Tolerance from the Dirac statistics: var(x^2) = 1/5 - 1/9 = 4/45, so the energy
// ratio has SD sqrt(4/45 / N_eff), N_eff = (sum E_k)^2 / sum(E_k^2 / n_k) with n_k the Diracs
// per 1 ms bin (at least one; density 4 pi c^3 t^2 / V capped at 1e4/s); 4 SD.
TEST(AmbixDiffuse, IsotropicTailGivesOneThirdPerAxis) {
    hw::ReceiverHistogram h = Histogram(1500);
    FillTail(h, 1e-5);
    std::fill(h.directionEnergy.begin(), h.directionEnergy.end(), 1.0f);
    const hw::SynthesisContext ctx = Context(2000);
    hw::Diagnostics diag;
    const auto ir = hw::SynthesizeAmbix({}, h, ctx, hw::Vec3(1, 0, 0), diag);
    ASSERT_FALSE(diag.HasErrors());
    double sumE = 0, sumE2n = 0;
    for (int k = 20; k < h.binCount; ++k) {
        const double e = h.Energy(0, k, 0), t = (k + 0.5) * 1e-3;
        const double n = std::max(1.0, std::min(4 * kPi * std::pow(343.0, 3) * t * t / 2000, 1e4) * 1e-3);
        sumE += e;
        sumE2n += e * e / n;
    }
    const double nEff = sumE * sumE / sumE2n;
    const double tol = 4 * std::sqrt(4.0 / 45 / nEff);  // absolute, on the ratio ~1/3
    double w = 0, e[4] = {0, 0, 0, 0};
    for (size_t n = 0; n < ir.FrameCount(); ++n)
        for (int c = 0; c < 4; ++c) e[c] += double(ir.samples[n * 4 + c]) * ir.samples[n * 4 + c];
    w = e[0];
    for (int c = 1; c < 4; ++c) EXPECT_NEAR(e[c] / w, 1.0 / 3, std::max(tol, 1e-3)) << "channel " << c;
}

// LF from the AmbiX channels (W omni, Y = figure-of-eight toward the left when the source is
// straight ahead; REFERENCES Part B 1.4) equals the histogram's LF within 0.02. The tail
// arrives from the eight lateral cells (azimuth sectors around +-90 degrees, elevation bands
// next to the horizon); the histogram's lateral record holds E (d.a)^2 averaged over those
// cells, found here by rejection sampling with the tracer's own DirectionCell.
TEST(AmbixDiffuse, LateralFractionFromAmbixMatchesHistogram) {
    const hw::Vec3 lateralAxis(0, 0, -1);  // left of a listener facing +x (source ahead)
    std::vector<int> cells;
    for (int el : {3, 4})
        for (int az : {1, 2, 5, 6}) cells.push_back(el * 8 + az);
    double meanSq = 0;
    {
        std::mt19937_64 rng(1);
        std::normal_distribution<double> g;
        int kept = 0;
        while (kept < 200000) {
            hw::Vec3 d(g(rng), g(rng), g(rng));
            d.normalize();
            if (std::find(cells.begin(), cells.end(), hw::DirectionCell(d)) == cells.end()) continue;
            meanSq += std::pow(d.dot(lateralAxis), 2);
            ++kept;
        }
        meanSq /= kept;
    }
    // A small room (V = 100 m^3) so that the 5-80 ms window holds ~400 Diracs: the
    // within-cell spread of y^2 (SD ~0.15) then moves LF by ~LF 0.15/0.85/sqrt(400) = 0.006
    // (1 SD), so the 0.02 bound of issue 6 is ~3 SD.
    const double distance = 3, c = 343.0, td = distance / c;
    hw::ReceiverHistogram h = Histogram(800);
    h.directDelayS = td;
    const int first = static_cast<int>(std::ceil(td / 1e-3)) + 1;
    for (int k = first; k < h.binCount; ++k)
        for (int batch = 0; batch < hw::kBatchCount; ++batch)
            for (int b = 0; b < hw::kBandCount; ++b)
                h.energy[(static_cast<size_t>(batch) * h.binCount + k) * hw::kBandCount + b] =
                    static_cast<float>(2e-4 * std::exp(-13.8155 * (k * 1e-3 - td) / 1.0));
    for (int cb = 0; cb < hw::DirectionBinCount(h.binCount); ++cb)
        for (int cell : cells) h.directionEnergy[cb * hw::kDirectionCells + cell] = 1.0f;
    hw::ReceiverPaths paths;
    hw::SpecularPath direct;
    direct.delayS = td;
    direct.energy = hw::Bands::Constant(1 / (4 * kPi * distance * distance));
    direct.arrivalFrom = hw::Vec3(1, 0, 0);
    paths.paths.push_back(direct);

    // Histogram LF, 1 kHz band: lateral energy 5-80 ms over all energy 0-80 ms (direct incl.).
    const int band = 4;
    double lat = 0, all = direct.energy[band];
    for (int k = 0; k < h.binCount; ++k) {
        const double t0 = k * 1e-3 - td;
        const double e = h.Energy(0, k, band);
        if (t0 >= 0.005 && t0 + 1e-3 <= 0.080 + 1e-9) lat += e * meanSq;
        if (t0 + 1e-3 <= 0.080 + 1e-9) all += e;
    }
    const double lfHist = lat / all;

    hw::Diagnostics diag;
    const auto ir = hw::SynthesizeAmbix(paths, h, Context(100), hw::Vec3(1, 0, 0), diag);
    ASSERT_FALSE(diag.HasErrors());
    const auto w = hw_test::AnalyseBands(Channel(ir, 0), kFs), y = hw_test::AnalyseBands(Channel(ir, 1), kFs);
    // Window edges on the 1 ms bins used above, measured from the direct delay.
    const int firstLatBin = static_cast<int>(std::ceil((td + 0.005) / 1e-3 - 1e-9));
    const int endBin = static_cast<int>(std::floor((td + 0.080) / 1e-3 + 1e-9));
    const double lfIr = y.bands[band].Energy(firstLatBin * kFs / 1000, endBin * kFs / 1000) /
                        w.bands[band].Energy(-w.bands[band].offset, endBin * kFs / 1000);
    EXPECT_GT(lfHist, 0.1);
    EXPECT_NEAR(lfIr, lfHist, 0.02) << "histogram " << lfHist << ", AmbiX " << lfIr;
}

// A vertical facing has no head frame: refused with an error.
TEST(AmbixEncoding, RejectsVerticalFacing) {
    hw::Diagnostics diag;
    const auto ir = hw::SynthesizeAmbix({}, Histogram(10), Context(100), hw::Vec3(0, 1, 0), diag);
    EXPECT_TRUE(diag.HasErrors());
    EXPECT_TRUE(ir.samples.empty());
}
