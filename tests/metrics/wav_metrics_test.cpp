// WAV path of the parameters: octave filtering + Lundeby noise handling + the band core.
#include "hallwright/wav_metrics.h"

#include <cmath>
#include <cstdio>
#include <random>

#include <gtest/gtest.h>

namespace hw = hallwright;

namespace {

constexpr double kLn10x6 = 13.815510557964274;

/* White-noise carrier under an exponential energy envelope e^(-6 ln10 t / T), starting at
   `startS`, plus stationary white noise `noiseDb` below the envelope's starting power. */
hw::WavData DecayingNoise(double t, double lengthS, uint64_t seed, double noiseDb = -1e9,
                          double startS = 0.02, int fs = 48000) {
    std::mt19937_64 rng(seed);
    std::normal_distribution<double> gauss(0.0, 1.0);
    hw::WavData w;
    w.sampleRate = fs;
    w.channels = 1;
    const size_t n = static_cast<size_t>(lengthS * fs);
    w.samples.resize(n);
    const double k = kLn10x6 / t, amp = 0.25;
    const double noiseAmp = noiseDb > -900 ? amp * std::pow(10.0, noiseDb / 20.0) : 0.0;
    for (size_t i = 0; i < n; ++i) {
        const double tt = static_cast<double>(i) / fs - startS;
        double v = tt >= 0 ? amp * std::exp(-0.5 * k * tt) * gauss(rng) : 0.0;
        if (noiseAmp > 0) v += noiseAmp * gauss(rng);
        w.samples[i] = static_cast<float>(v);
    }
    // A clear onset: the first sample of the decay at full amplitude.
    w.samples[static_cast<size_t>(startS * fs)] = static_cast<float>(amp * 3.0);
    return w;
}

std::optional<double> Get(const hw::ParameterTable& t, const char* p, int band) {
    const hw::ParameterValue* v = t.Find(p, band);
    return v ? v->value : std::nullopt;
}

}  // namespace

// Noise-free exponential decays (a predicted IR): band T30 within 2 % at 500 Hz - 4 kHz,
// averaged over 20 noise seeds (issue 7); the ideal value is T (REFERENCES Part B §2). The
// seed-to-seed spread of T30 from a 1 s noise decay in an octave band is a few 0.1 %.
TEST(WavMetrics, NoiseFreeDecayT30Within2PercentValidation) {
    for (double t : {0.5, 1.0, 2.0}) {
        double sum[8] = {0};
        int n[8] = {0};
        for (int seed = 1; seed <= 20; ++seed) {
            hw::WavMetricsOptions opt;
            opt.bands = {3, 4, 5, 6};
            opt.sti = false;
            hw::Diagnostics diag;
            std::vector<hw::BandNoiseAnalysis> noise;
            const auto tab = hw::ParametersFromWav(DecayingNoise(t, 1.3 * t, seed), opt, diag, &noise);
            ASSERT_FALSE(diag.HasErrors()) << diag.ToString();
            for (int band : opt.bands) {
                EXPECT_TRUE(noise[band].noiseFree) << noise[band].note;
                const auto v = Get(tab, "T30", hw::kNominalBandHz[band]);
                ASSERT_TRUE(v) << tab.Find("T30", hw::kNominalBandHz[band])->note;
                sum[band] += *v;
                ++n[band];
            }
        }
        for (int band : {3, 4, 5, 6}) {
            const double mean = sum[band] / n[band];
            std::printf("T = %.1f s, %d Hz: mean T30 %.4f s (%+.2f %%)\n", t, hw::kNominalBandHz[band], mean,
                        100 * (mean / t - 1));
            EXPECT_NEAR(mean, t, 0.02 * t) << hw::kNominalBandHz[band];
        }
    }
}

// Lundeby et al. 1995 with stationary noise N dB below the start of the envelope: the true
// crosspoint is t_c = N/60 T (REFERENCES Part B §3). It must be found within two intervals
// (interval = 1/5 of 10 dB of decay), and T30 recovered within 3 % at 1 kHz when the decay
// reaches 45 dB (N = 50, 60), refused otherwise (N = 30, 40: ISO 3382 asks the bottom of
// the -5..-35 dB range to be 10 dB above the noise).
TEST(WavMetrics, LundebyCrosspointAndCompensatedT30Validation) {
    const double t = 1.0;
    for (double floorDb : {30.0, 40.0, 50.0, 60.0}) {
        double sumT30 = 0, sumT20 = 0;
        int nT30 = 0, nT20 = 0;
        for (int seed = 1; seed <= 10; ++seed) {
            hw::WavMetricsOptions opt;
            opt.bands = {4};
            opt.sti = false;
            hw::Diagnostics diag;
            std::vector<hw::BandNoiseAnalysis> noise;
            const auto tab = hw::ParametersFromWav(DecayingNoise(t, 2.0, seed, -floorDb), opt, diag, &noise);
            const hw::BandNoiseAnalysis& nz = noise[4];
            ASSERT_TRUE(nz.ok) << nz.note;
            EXPECT_FALSE(nz.noiseFree);
            const double trueCross = 0.02 + floorDb / 60.0 * t;
            const double interval = 10.0 / (60.0 / t) / 5.0;
            EXPECT_NEAR(nz.crosspointS, trueCross, 2 * interval) << floorDb << " dB, seed " << seed;
            EXPECT_NEAR(nz.peakToNoiseDb, floorDb, 3.0);
            if (auto v = Get(tab, "T30", 1000)) sumT30 += *v, ++nT30;
            if (auto v = Get(tab, "T20", 1000)) sumT20 += *v, ++nT20;
            if (floorDb < 45) {
                EXPECT_FALSE(Get(tab, "T30", 1000));
                EXPECT_FALSE(tab.Find("T30", 1000)->note.empty());
            }
        }
        if (floorDb >= 50) {
            ASSERT_EQ(nT30, 10);
            std::printf("noise floor -%.0f dB: mean T30 %.4f s\n", floorDb, sumT30 / nT30);
            EXPECT_NEAR(sumT30 / nT30, t, 0.03 * t);
        } else {
            EXPECT_EQ(nT30, 0);
        }
        if (floorDb >= 40) {
            ASSERT_EQ(nT20, 10);
            EXPECT_NEAR(sumT20 / nT20, t, 0.03 * t);
        }
    }
}

// A band without the dynamic range for anything gives empty values with the reason.
TEST(WavMetrics, TooLittleDynamicRangeIsEmptyWithReason) {
    hw::WavMetricsOptions opt;
    opt.bands = {4};
    hw::Diagnostics diag;
    const auto tab = hw::ParametersFromWav(DecayingNoise(1.0, 2.0, 3, -15.0), opt, diag);
    for (const char* p : {"EDT", "T20", "T30"}) {
        const hw::ParameterValue* v = tab.Find(p, 1000);
        ASSERT_NE(v, nullptr);
        EXPECT_FALSE(v->value) << p;
        EXPECT_FALSE(v->note.empty()) << p;
    }
}

// LF and LFC from AmbiX (ACN/SN3D, W = ACN0, Y = ACN1, X = ACN3): frontal direct sound plus one
// horizontal reflection of equal energy at 30 ms (REFERENCES Part B §1.4: 90 deg -> 0.5/0.5,
// 45 deg -> 0.25/0.3536); the source azimuth rotates the figure-of-eight with it.
TEST(WavMetrics, AmbixLateralFraction) {
    for (double srcAz : {0.0, 30.0}) {
        for (double rel : {90.0, 45.0}) {
            const int fs = 48000;
            hw::WavData w;
            w.sampleRate = fs;
            w.channels = 4;
            w.samples.assign(static_cast<size_t>(0.5 * fs) * 4, 0.0f);
            auto put = [&](size_t n, double azDeg) {
                const double a = azDeg * M_PI / 180;
                w.samples[n * 4 + 0] += 0.5f;
                w.samples[n * 4 + 1] += static_cast<float>(0.5 * std::sin(a));
                w.samples[n * 4 + 3] += static_cast<float>(0.5 * std::cos(a));
            };
            put(480, srcAz);
            put(480 + 1440, srcAz + rel);
            hw::WavMetricsOptions opt;
            opt.layout = hw::ChannelLayout::kAmbix;
            opt.sourceAzimuthDeg = srcAz;
            opt.bands = {3, 4, 5};
            hw::Diagnostics diag;
            const auto tab = hw::ParametersFromWav(w, opt, diag);
            const double lf = rel == 90 ? 0.5 : 0.25, lfc = rel == 90 ? 0.5 : std::sqrt(0.5) / 2;
            for (int hz : {500, 1000, 2000}) {
                // Tolerance: the band-limited pulses overlap a little in time (filter ringing).
                EXPECT_NEAR(Get(tab, "LF", hz).value_or(-1), lf, 5e-3) << hz << " " << rel;
                EXPECT_NEAR(Get(tab, "LFC", hz).value_or(-1), lfc, 5e-3) << hz << " " << rel;
            }
        }
    }
}

// IACC (ISO 3382-1 Annex B; REFERENCES Part B §1.5 checks): equal ears -> 1, right ear
// delayed 0.5 ms -> 1, inverted -> 1, independent noise -> about 0.
TEST(WavMetrics, BinauralIacc) {
    const int fs = 48000;
    const hw::WavData mono = DecayingNoise(0.8, 1.5, 7);
    // Nearly stationary (T = 100 s) for the independent ear, so the late window is long.
    const hw::WavData other = DecayingNoise(100.0, 1.5, 8), otherLeft = DecayingNoise(100.0, 1.5, 9);
    auto pair = [&](int mode) {
        hw::WavData w;
        w.sampleRate = fs;
        w.channels = 2;
        const size_t n = mono.samples.size();
        w.samples.assign(2 * n, 0.0f);
        for (size_t i = 0; i < n; ++i) {
            w.samples[2 * i] = mode == 3 ? otherLeft.samples[i] : mono.samples[i];
            float r = mono.samples[i];
            if (mode == 1) r = i >= 24 ? mono.samples[i - 24] : 0.0f;
            if (mode == 2) r = -mono.samples[i];
            if (mode == 3) r = other.samples[i];
            w.samples[2 * i + 1] = r;
        }
        hw::WavMetricsOptions opt;
        opt.layout = hw::ChannelLayout::kBinaural;
        opt.bands = {3, 4, 5};
        hw::Diagnostics diag;
        return hw::ParametersFromWav(w, opt, diag);
    };
    for (int mode = 0; mode < 3; ++mode) {
        const auto tab = pair(mode);
        EXPECT_NEAR(Get(tab, "IACC_E", 1000).value_or(-1), 1.0, mode == 1 ? 0.02 : 1e-9) << mode;
        EXPECT_NEAR(Get(tab, "IACC_E3", 0).value_or(-1), 1.0, mode == 1 ? 0.02 : 1e-9) << mode;
    }
    // Independent stationary ears (left = right = a stationary noise, right independent):
    // over the late part (1.4 s, B T about 1000 in the 1 kHz octave) the correlation is of
    // order 1/sqrt(1000) = 0.03; the maximum over the lags stays well below 0.15.
    EXPECT_LT(Get(pair(3), "IACC_L", 1000).value_or(1), 0.15);
}

TEST(WavMetrics, LayoutNeedsChannels) {
    hw::WavMetricsOptions opt;
    opt.layout = hw::ChannelLayout::kAmbix;
    hw::Diagnostics diag;
    const auto tab = hw::ParametersFromWav(DecayingNoise(1.0, 0.5, 1), opt, diag);
    EXPECT_TRUE(diag.HasErrors());
    EXPECT_TRUE(tab.values.empty());
}

// G from the WAV: the response.h convention. A single Dirac of amplitude 1/sqrt(4 pi r^2) is
// the free-field response at r; with the reference 1/(4 pi 100) G = 20 lg(10 / r) in every
// band (ISO 3382-1 A.2.1: p_10 the free-field IR at 10 m): -6.02 dB at 20 m.
TEST(WavMetrics, StrengthOfFreeFieldDirac) {
    for (double r : {10.0, 20.0}) {
        hw::WavData w;
        w.sampleRate = 48000;
        w.channels = 1;
        w.samples.assign(48000, 0.0f);
        w.samples[1000] = static_cast<float>(1.0 / std::sqrt(4 * M_PI * r * r));
        hw::WavMetricsOptions opt;
        opt.referenceEnergy = 1.0 / (4 * M_PI * 100);
        hw::Diagnostics diag;
        const auto tab = hw::ParametersFromWav(w, opt, diag);
        for (int hz : {125, 1000, 4000})
            EXPECT_NEAR(Get(tab, "G", hz).value_or(99), 20 * std::log10(10 / r), 0.01) << hz;
    }
}
