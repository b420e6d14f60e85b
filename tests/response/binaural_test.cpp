// Tests of binaural synthesis (engine/response/binaural.cpp) with Debian's MIT KEMAR set.
#include <gtest/gtest.h>

#include <cmath>
#include <filesystem>
#include <numbers>

#include <mysofa.h>

#include "hallwright/response.h"

namespace {

constexpr double kPi = std::numbers::pi;
constexpr int kFs = 48000;

/* Internal direction of head azimuth/elevation for facing +x, up +y (left = -z). */
hw::Vec3 HeadDirection(double azDeg, double elDeg) {
    const double az = azDeg * kPi / 180, el = elDeg * kPi / 180;
    return std::cos(el) * std::cos(az) * hw::Vec3(1, 0, 0) + std::cos(el) * std::sin(az) * hw::Vec3(0, 0, -1) +
           std::sin(el) * hw::Vec3(0, 1, 0);
}

hw::ImpulseResponse OnePath(const hw::Vec3& from, const hw::Vec3& facing, const hw::HrtfSet& set) {
    hw::ReceiverPaths paths;
    hw::SpecularPath p;
    p.delayS = 0.1;  // 4800 samples exactly
    p.energy = hw::Bands::Constant(1e-3);
    p.arrivalFrom = from;
    paths.paths.push_back(p);
    hw::ReceiverHistogram h;
    hw::SynthesisContext ctx;
    ctx.sampleRate = kFs;
    ctx.roomVolumeM3 = 500;
    ctx.lengthS = 0.3;
    hw::Diagnostics diag;
    hw::ImpulseResponse ir = hw::SynthesizeBinaural(paths, h, ctx, facing, set, diag);
    EXPECT_FALSE(diag.HasErrors()) << diag.ToString();
    return ir;
}

double EarEnergy(const hw::ImpulseResponse& ir, int ear) {
    double e = 0;
    for (size_t n = 0; n < ir.FrameCount(); ++n) e += double(ir.samples[2 * n + ear]) * ir.samples[2 * n + ear];
    return e;
}

class BinauralSynthesis : public ::testing::Test {
  protected:
    void SetUp() override {
        if (!std::filesystem::exists(hw::kDefaultHrtfPath)) GTEST_SKIP() << "no " << hw::kDefaultHrtfPath;
        hw::Diagnostics diag;
        set_ = hw::HrtfSet::Open(hw::kDefaultHrtfPath, kFs, diag);
        ASSERT_TRUE(set_) << diag.ToString();
    }
    std::unique_ptr<hw::HrtfSet> set_;
};

}  // namespace

// The rendered path equals libmysofa's own filter for the direction (read here straight from
// libmysofa, AES69 axes x front, y left, z up): correlation > 0.99 per ear.
TEST_F(BinauralSynthesis, PathFilterEqualsLibmysofaFilter) {
    const double az = 30, el = 10;
    const hw::ImpulseResponse ir = OnePath(HeadDirection(az, el), hw::Vec3(1, 0, 0), *set_);
    int len = 0, err = 0;
    MYSOFA_EASY* easy = mysofa_open(hw::kDefaultHrtfPath, kFs, &len, &err);
    ASSERT_TRUE(easy);
    float c[3] = {static_cast<float>(az), static_cast<float>(el), 1.0f};
    mysofa_s2c(c);  // spherical (azimuth ccw from front, elevation) to x, y, z
    std::vector<float> l(len), r(len);
    float dl = 0, dr = 0;
    mysofa_getfilter_float(easy, c[0], c[1], c[2], l.data(), r.data(), &dl, &dr);
    mysofa_close(easy);
    for (int ear = 0; ear < 2; ++ear) {
        const std::vector<float>& ref = ear == 0 ? l : r;
        const int start = 4800 + static_cast<int>(std::lround((ear == 0 ? dl : dr) * kFs));
        double xy = 0, xx = 0, yy = 0;
        for (int i = 0; i < len; ++i) {
            const double x = ir.samples[2 * (start + i) + ear], y = ref[i] * std::sqrt(1e-3);
            xy += x * y;
            xx += x * x;
            yy += y * y;
        }
        EXPECT_GT(xy / std::sqrt(xx * yy), 0.99) << "ear " << ear;
    }
}

// An arrival from the listener's left reaches the left ear first, by an interaural delay
// within the set's range (at most ~1 ms for a human-sized head), and louder.
TEST_F(BinauralSynthesis, LeftArrivalReachesLeftEarFirst) {
    const hw::ImpulseResponse ir = OnePath(HeadDirection(90, 0), hw::Vec3(1, 0, 0), *set_);
    int best = 0;
    double bestV = -1e300;
    const int maxLag = kFs / 1000 + 5;  // search +-1.1 ms
    for (int lag = -maxLag; lag <= maxLag; ++lag) {
        double v = 0;
        for (size_t n = 4700; n < 5600; ++n) v += double(ir.samples[2 * n]) * ir.samples[2 * (n + lag) + 1];
        if (v > bestV) {
            bestV = v;
            best = lag;
        }
    }
    EXPECT_GT(best, 0) << "right ear must lag";
    EXPECT_LE(best, kFs / 1000) << "interaural delay above 1 ms";
    EXPECT_GT(EarEnergy(ir, 0), 2 * EarEnergy(ir, 1));
}

// Turning the seat by 90 degrees moves a frontal arrival to the side: equal ears first, then
// the ear on the arrival's new side (the left, see below) clearly louder.
TEST_F(BinauralSynthesis, TurningFacingMovesFrontalArrivalToTheSide) {
    const hw::ImpulseResponse front = OnePath(hw::Vec3(1, 0, 0), hw::Vec3(1, 0, 0), *set_);
    const hw::ImpulseResponse turned = OnePath(hw::Vec3(1, 0, 0), hw::Vec3(0, 0, 1), *set_);
    EXPECT_NEAR(10 * std::log10(EarEnergy(front, 0) / EarEnergy(front, 1)), 0.0, 1.0);
    // Facing +z: left = up x front = (0,1,0) x (0,0,1) = (1,0,0): +x is now on the LEFT.
    EXPECT_GT(10 * std::log10(EarEnergy(turned, 0) / EarEnergy(turned, 1)), 3.0);
}

// An isotropic late tail (decoded from AmbiX) is left-right symmetric: over 5 seeds the mean
// interaural level difference is zero within its 95 % t interval (t(0.975, 4) = 2.776 x
// SD / sqrt(5)), and nothing is non-finite. (A lopsided decoder, e.g. a virtual source below
// the set's lowest measured elevation, biased it by ~1 dB.)
TEST_F(BinauralSynthesis, IsotropicTailIsBalanced) {
    hw::ReceiverHistogram h;
    h.binCount = 800;
    h.energy.assign(static_cast<size_t>(hw::kBatchCount) * h.binCount * hw::kBandCount, 0.0f);
    for (int k = 20; k < h.binCount; ++k)
        for (int batch = 0; batch < hw::kBatchCount; ++batch)
            for (int b = 0; b < hw::kBandCount; ++b)
                h.energy[(static_cast<size_t>(batch) * h.binCount + k) * hw::kBandCount + b] =
                    static_cast<float>(1e-5 * std::exp(-13.8155 * k * 1e-3 / 0.8));
    h.directionEnergy.assign(static_cast<size_t>(hw::DirectionBinCount(h.binCount)) * hw::kDirectionCells, 1.0f);
    hw::SynthesisContext ctx;
    ctx.roomVolumeM3 = 800;
    std::vector<double> ild;
    for (int seed = 1; seed <= 5; ++seed) {
        ctx.seed = seed;
        hw::Diagnostics diag;
        const hw::ImpulseResponse ir = hw::SynthesizeBinaural({}, h, ctx, hw::Vec3(1, 0, 0), *set_, diag);
        ASSERT_FALSE(diag.HasErrors()) << diag.ToString();
        for (float v : ir.samples) ASSERT_TRUE(std::isfinite(v));
        ild.push_back(10 * std::log10(EarEnergy(ir, 0) / EarEnergy(ir, 1)));
    }
    double mean = 0, var = 0;
    for (double v : ild) mean += v / ild.size();
    for (double v : ild) var += (v - mean) * (v - mean) / (ild.size() - 1);
    EXPECT_LT(std::fabs(mean), 2.776 * std::sqrt(var / ild.size())) << "mean ILD " << mean << " dB";
}

// A missing SOFA file is an error naming it, not a crash.
TEST(BinauralHrtf, MissingFileIsAnError) {
    hw::Diagnostics diag;
    EXPECT_FALSE(hw::HrtfSet::Open("/nonexistent/set.sofa", kFs, diag));
    EXPECT_NE(diag.ToString().find("/nonexistent/set.sofa"), std::string::npos);
}
