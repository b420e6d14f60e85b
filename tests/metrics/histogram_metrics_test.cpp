// Histogram path of the parameters: ideal decays against closed forms, lateral fractions
// against their definitions, the dynamic-range refusal, and jackknife interval coverage.
#include <cmath>
#include <cstdio>
#include <random>

#include <gtest/gtest.h>

#include "hallwright/metrics.h"
#include "hallwright/octave_filter.h"
#include "hallwright/sti.h"

namespace hw = hallwright;

namespace {

constexpr double kLn10x6 = 13.815510557964274;  // 6 ln 10: energy falls 60 dB in T

/* A histogram whose bins hold the exact integral of scale * e^(-k (t - ts)) for t >= ts, the
   same in every band and batch. */
hw::ReceiverHistogram ExponentialHistogram(double t, double durationS, double ts = 0,
                                           double scale = 1.0) {
    hw::ReceiverHistogram h;
    h.binCount = static_cast<int>(std::lround(durationS / hw::kBinWidthS));
    h.directDelayS = ts;
    h.energy.assign(static_cast<size_t>(hw::kBatchCount) * h.binCount * hw::kBandCount, 0.0f);
    h.lateralSq.assign(static_cast<size_t>(hw::kBatchCount) * hw::kLateralBins * hw::kBandCount, 0.0f);
    h.lateralAbs = h.lateralSq;
    const double k = kLn10x6 / t;
    for (int i = 0; i < h.binCount; ++i) {
        const double a = std::max(ts, i * hw::kBinWidthS), b = (i + 1) * hw::kBinWidthS;
        if (b <= ts) continue;
        const double e = scale * (std::exp(-k * (a - ts)) - std::exp(-k * (b - ts))) / k;
        for (int batch = 0; batch < hw::kBatchCount; ++batch)
            for (int band = 0; band < hw::kBandCount; ++band)
                h.energy[(static_cast<size_t>(batch) * h.binCount + i) * hw::kBandCount + band] =
                    static_cast<float>(e);
    }
    return h;
}

double Value(const hw::ParameterTable& t, const std::string& p, int band) {
    const hw::ParameterValue* v = t.Find(p, band);
    EXPECT_NE(v, nullptr) << p << " " << band;
    if (!v) return NAN;
    EXPECT_TRUE(v->value.has_value()) << p << " " << band << ": " << v->note;
    return v->value.value_or(NAN);
}

}  // namespace

// REFERENCES Part B §2 (derived): for p^2 = e^(-kt), L(t) = -60 t / T exactly, so
// EDT = T20 = T30 = T; C_te = 10 lg(e^(k te) - 1); D50 = 1 - e^(-0.05 k); Ts = 1/k.
TEST(HistogramMetrics, IdealExponentialDecaysMatchClosedForms) {
    struct Row { double t, c80, c50, d50, tsMs; };
    // Table values of REFERENCES Part B §2 (computed there from the closed forms).
    const Row rows[] = {{0.5, 9.0956, 4.7437, 0.74881, 36.191},
                        {1.0, 3.0534, -0.0206, 0.49881, 72.382},
                        {2.0, -1.3206, -3.8454, 0.29205, 144.765}};
    for (const Row& r : rows) {
        hw::ReceiverPaths paths;
        const hw::ReceiverHistogram h = ExponentialHistogram(r.t, 1.6 * r.t);  // 96 dB of decay
        hw::HistogramMetricsOptions opt;
        opt.sourceDirection = hw::Vec3(1, 0, 0);
        const hw::ParameterTable tab = hw::ParametersFromHistogram(paths, h, opt);
        EXPECT_NEAR(tab.timeZeroS, 0.0, 1e-12);
        for (int hz : {125, 1000, 4000}) {
            for (const char* p : {"EDT", "T20", "T30"})
                EXPECT_NEAR(Value(tab, p, hz), r.t, 1e-3 * r.t) << p << " T=" << r.t;
            EXPECT_NEAR(Value(tab, "C80", hz), r.c80, 2e-4);  // table rounding 5e-5, float bins
            EXPECT_NEAR(Value(tab, "C50", hz), r.c50, 2e-4);
            EXPECT_NEAR(Value(tab, "D50", hz), r.d50, 2e-5);
            // Bins are taken as uniform inside: the centroid of e^(-kt) over a bin of width w
            // lies k w^2 / 12 before its middle (first order), plus table rounding 5e-4 ms.
            const double k = kLn10x6 / r.t, w = hw::kBinWidthS;
            EXPECT_NEAR(Value(tab, "Ts", hz), r.tsMs, 1000 * k * w * w / 12 + 5e-4);
            EXPECT_NEAR(Value(tab, "Curvature", hz), 0.0, 0.1);
            EXPECT_GT(Value(tab, "T30_r", hz), 0.99999);
        }
        // Noise-free identical batches: the interval is zero.
        EXPECT_NEAR(tab.Find("T30", 1000)->ci95.value(), 0.0, 1e-9);
        EXPECT_NEAR(Value(tab, "T30_M", 0), r.t, 1e-3 * r.t);
    }
}

// Off-grid onset: a specular direct sound at 12.34 ms plus the exponential tail from there.
// The 50/80 ms limits fall inside bins and must be split (closed form derived as above:
// early = Ed + (1 - e^(-k te))/k, late = e^(-k te)/k, with Ed the direct energy).
TEST(HistogramMetrics, OffGridOnsetUsesExactLimits) {
    const double t = 1.0, ts = 0.01234, k = kLn10x6 / t, ed = 0.02;
    hw::ReceiverPaths paths;
    hw::SpecularPath direct;
    direct.delayS = ts;
    direct.energy = hw::Bands::Constant(ed);
    direct.arrivalFrom = hw::Vec3(1, 0, 0);
    paths.paths.push_back(direct);
    const hw::ReceiverHistogram h = ExponentialHistogram(t, 2.0, ts);
    const hw::ParameterTable tab = hw::ParametersFromHistogram(paths, h, {});
    EXPECT_NEAR(tab.timeZeroS, ts, 1e-12);
    auto early = [&](double te) { return ed + (1 - std::exp(-k * te)) / k; };
    auto late = [&](double te) { return std::exp(-k * te) / k; };
    const double total = ed + 1 / k;
    EXPECT_NEAR(Value(tab, "C50", 1000), 10 * std::log10(early(0.05) / late(0.05)), 1e-3);
    EXPECT_NEAR(Value(tab, "C80", 1000), 10 * std::log10(early(0.08) / late(0.08)), 1e-3);
    EXPECT_NEAR(Value(tab, "D50", 1000), early(0.05) / total, 1e-5);
    // Ts: energy ratios and Ts read the specular arrivals at their exact times (metrics.h;
    // the WAV path moves its limits by its filter's delay instead), so Ts is the closed form
    // (Ed x 0 + 1/k^2) / total from t0; the tail's bins are uniform inside, k w^2 / 12 of
    // centroid error (as in the ideal-decay test).
    const double w = hw::kBinWidthS;
    EXPECT_NEAR(Value(tab, "Ts", 1000), 1000 * (1 / (k * k)) / total, 1000 * k * w * w / 12 + 1e-4);
    // G: total energy re 1/(4 pi 100) (ISO 3382-1 A.2.1; propagation.h units).
    EXPECT_NEAR(Value(tab, "G", 1000), 10 * std::log10(total * 4 * M_PI * 100), 1e-3);
    // T30 of the tail is unaffected by the direct impulse (it starts after -5 dB).
    EXPECT_NEAR(Value(tab, "T30", 1000), t, 1e-3);
}

// Dynamic range: ISO 3382-1/-2 ask the bottom of the range to be 10 dB above the end, so a
// record ending 36 dB down allows T20 (35 dB) but not T30 (45 dB). The late slope is
// 30 dB/s (T = 2 s): 9 dB more needs 0.3 s, with the 10 % margin 1.2 + 0.33 -> 1.6 s.
TEST(HistogramMetrics, ShortRecordRefusesT30AndSuggestsDuration) {
    hw::ReceiverPaths paths;
    const hw::ParameterTable tab = hw::ParametersFromHistogram(paths, ExponentialHistogram(2.0, 1.2), {});
    const hw::ParameterValue* t30 = tab.Find("T30", 500);
    ASSERT_NE(t30, nullptr);
    EXPECT_FALSE(t30->value.has_value());
    EXPECT_NE(t30->note.find("raise duration_s to 1.6"), std::string::npos) << t30->note;
    EXPECT_NEAR(Value(tab, "T20", 500), 2.0, 2e-3);
    EXPECT_FALSE(tab.Find("T30_M", 0)->value.has_value());
    // With the suggested duration T30 is given.
    const hw::ParameterTable longer =
        hw::ParametersFromHistogram(paths, ExponentialHistogram(2.0, 1.6), {});
    EXPECT_NEAR(Value(longer, "T30", 500), 2.0, 2e-3);
}

// LF and LFC of a frontal direct sound plus one lateral reflection of equal energy
// (REFERENCES Part B §1.4, derived from ISO 3382-1 A.2.2): 90 deg -> 0.5 / 0.5,
// 45 deg -> 0.25 / 0.3536.
TEST(HistogramMetrics, LateralFractionOfOneReflection) {
    for (double deg : {90.0, 45.0}) {
        hw::ReceiverPaths paths;
        hw::SpecularPath direct, refl;
        direct.delayS = 0.010;
        direct.energy = hw::Bands::Constant(1.0);
        direct.arrivalFrom = hw::Vec3(1, 0, 0);  // source straight ahead, y up
        refl = direct;
        refl.order = 1;
        refl.delayS = 0.030;
        const double a = deg * M_PI / 180;
        refl.arrivalFrom = hw::Vec3(std::cos(a), 0, std::sin(a));  // horizontal plane
        paths.paths = {direct, refl};
        hw::ReceiverHistogram h = ExponentialHistogram(1.0, 1.0, 0.010, 0.0);  // no tracer energy
        const hw::ParameterTable tab = hw::ParametersFromHistogram(paths, h, {});
        const double lf = deg == 90 ? 0.5 : 0.25, lfc = deg == 90 ? 0.5 : std::sqrt(0.5) / 2;
        EXPECT_NEAR(Value(tab, "LF", 1000), lf, 1e-9);
        EXPECT_NEAR(Value(tab, "LFC", 1000), lfc, 1e-9);
        // LF_M averages 125 ... 1000 Hz; at 125 Hz about 3e-5 of the filtered pulse energy
        // rings on past t0 + 80 ms (analysis filter, metrics.h).
        EXPECT_NEAR(Value(tab, "LF_M", 0), lf, 2e-5);
    }
}

// The tracer's lateral record adds to the specular part with the same exact-time limits:
// lateral energy in the bin [direct + 3 ms, direct + 4 ms) lies before t0 + 5 ms and is
// excluded; a bin [direct + 40, 41 ms) counts fully (definition, ISO 3382-1 A.2.2).
TEST(HistogramMetrics, TracerLateralRecordUsesTheWindow) {
    hw::ReceiverPaths paths;
    hw::SpecularPath direct;
    direct.delayS = 0.010;
    direct.energy = hw::Bands::Constant(1.0);
    direct.arrivalFrom = hw::Vec3(1, 0, 0);
    paths.paths = {direct};
    // A negligible decay (total 7e-11) keeps the record running to 1 s.
    hw::ReceiverHistogram h = ExponentialHistogram(1.0, 1.0, 0.010, 1e-9);
    auto put = [&](int bin, int lbin, float e, float sq, float ab) {
        for (int b = 0; b < hw::kBatchCount; ++b)
            for (int band = 0; band < hw::kBandCount; ++band) {
                h.energy[(static_cast<size_t>(b) * h.binCount + bin) * hw::kBandCount + band] += e;
                const size_t li = (static_cast<size_t>(b) * hw::kLateralBins + lbin) * hw::kBandCount + band;
                h.lateralSq[li] += sq;
                h.lateralAbs[li] += ab;
            }
    };
    put(13, 3, 0.5f, 0.5f, 0.5f);    // 13 ms from emission = 3 ms after the direct sound
    put(50, 40, 0.5f, 0.25f, 0.4f);  // 50 ms = 40 ms after
    const hw::ParameterTable tab = hw::ParametersFromHistogram(paths, h, {});
    EXPECT_NEAR(Value(tab, "LF", 1000), 0.25 / 2.0, 1e-7);
    EXPECT_NEAR(Value(tab, "LFC", 1000), 0.4 / 2.0, 1e-7);
}

// STI of exponential decays, same T in all bands, male weights, no level terms: the table of
// REFERENCES Part B §6 (computed there from IEC 60268-16 with m(F) of Houtgast & Steeneken).
TEST(HistogramMetrics, StiOfExponentialDecaysMatchesTable) {
    const double t[] = {0.5, 1.0, 2.0}, sti[] = {0.7363, 0.5885, 0.4374};
    for (int i = 0; i < 3; ++i) {
        hw::ReceiverPaths paths;
        const hw::ParameterTable tab = hw::ParametersFromHistogram(paths, ExponentialHistogram(t[i], 3.0 * t[i]), {});
        EXPECT_NEAR(Value(tab, "STI", 0), sti[i], 2e-4) << t[i];
        EXPECT_NEAR(Value(tab, "MTI", 1000), sti[i], 2e-4);  // all bands equal: STI = MTI
    }
}

// Interval coverage: noisy batches (gamma-distributed bin energies, i.e. a compound count of
// ray arrivals) around a known decay with a fixed direct sound. Over 20 seeds, at least 17 of
// the 95 % intervals must contain the value from 20x the rays (issue 7). With true 95 %
// coverage, P(fewer than 17 of 20) = 1.6 %, and the seeds are fixed.
TEST(HistogramMetrics, JackknifeIntervalsCoverTheReference) {
    const double t = 1.2, ts = 0.02;
    hw::ReceiverPaths paths;
    hw::SpecularPath direct;
    direct.delayS = ts;
    direct.energy = hw::Bands::Constant(0.01);
    direct.arrivalFrom = hw::Vec3(1, 0, 0);
    paths.paths = {direct};
    const hw::ReceiverHistogram truth = ExponentialHistogram(t, 2.4, ts, 0.3);
    // Ray arrivals per bin and batch grow as t^2 (reflection density), capped.
    auto shape = [&](int bin, double rayFactor) {
        const double tt = bin * hw::kBinWidthS;
        return rayFactor * std::min(50.0, 0.5 + 200.0 * tt * tt);
    };
    auto noisy = [&](uint64_t seed, double rayFactor, int batches) {
        std::mt19937_64 rng(seed);
        hw::ReceiverHistogram h = truth;
        h.energy.assign(static_cast<size_t>(hw::kBatchCount) * h.binCount * hw::kBandCount, 0.0f);
        for (int g = 0; g < batches; ++g)
            for (int i = 0; i < h.binCount; ++i) {
                const double n = shape(i, rayFactor);
                std::gamma_distribution<double> gamma(n, 1.0 / n);
                for (int band = 0; band < hw::kBandCount; ++band) {
                    const size_t src = (static_cast<size_t>(0) * h.binCount + i) * hw::kBandCount + band;
                    const size_t dst = (static_cast<size_t>(g % hw::kBatchCount) * h.binCount + i) *
                                           hw::kBandCount + band;
                    h.energy[dst] += static_cast<float>(truth.energy[src] * gamma(rng) *
                                                        hw::kBatchCount / batches);
                }
            }
        return h;
    };
    const char* params[] = {"EDT", "T30", "C80", "C50", "D50", "Ts", "G", "STI"};
    const int bands[] = {1000, 1000, 1000, 1000, 1000, 1000, 1000, 0};
    hw::HistogramMetricsOptions opt;
    opt.bands = {4};
    const hw::ParameterTable ref = hw::ParametersFromHistogram(paths, noisy(999, 20.0, 8), opt);
    int covered[8] = {0};
    double meanHalfWidth[8] = {0};
    for (int seed = 1; seed <= 20; ++seed) {
        const hw::ParameterTable tab = hw::ParametersFromHistogram(paths, noisy(seed, 1.0, 8), opt);
        for (int p = 0; p < 8; ++p) {
            const hw::ParameterValue* v = tab.Find(params[p], bands[p]);
            ASSERT_TRUE(v && v->value && v->ci95) << params[p];
            const double r = ref.Find(params[p], bands[p])->value.value();
            covered[p] += std::fabs(*v->value - r) <= *v->ci95;
            meanHalfWidth[p] += *v->ci95 / 20;
        }
    }
    for (int p = 0; p < 8; ++p) {
        std::printf("coverage %-4s %2d/20, mean CI95 half-width %.4g\n", params[p], covered[p],
                    meanHalfWidth[p]);
        EXPECT_GE(covered[p], 17) << params[p] << " mean half-width " << meanHalfWidth[p];
        EXPECT_GT(meanHalfWidth[p], 0.0) << params[p];  // the noise is real
    }
}

// Occluded direct sound: time zero is the first arrival (here a first-order reflection at
// 25 ms, the tracer part starting with it), and the table is flagged (ISO 3382-1 onset rule
// applied to the first arrival, issue 7).
TEST(HistogramMetrics, OccludedDirectUsesFirstArrivalAndFlags) {
    hw::ReceiverPaths paths;
    paths.directOccluded = true;
    hw::SpecularPath refl;
    refl.order = 1;
    refl.delayS = 0.025;
    refl.energy = hw::Bands::Constant(0.01);
    refl.arrivalFrom = hw::Vec3(0, 0, 1);
    paths.paths = {refl};
    hw::ReceiverHistogram h = ExponentialHistogram(1.0, 2.0, 0.025);
    h.directDelayS = 0.015;  // the straight line would have been shorter
    hw::HistogramMetricsOptions opt;
    opt.sourceDirection = hw::Vec3(1, 0, 0);
    const hw::ParameterTable tab = hw::ParametersFromHistogram(paths, h, opt);
    EXPECT_TRUE(tab.directOccluded);
    EXPECT_NEAR(tab.timeZeroS, 0.025, 1e-12);
    ASSERT_FALSE(tab.notes.empty());
    EXPECT_NE(tab.notes[0].find("occluded"), std::string::npos);
    EXPECT_NEAR(Value(tab, "T30", 1000), 1.0, 1e-3);
    // C80 from the first arrival: the same closed form as the off-grid test.
    const double k = kLn10x6, early = 0.01 + (1 - std::exp(-k * 0.08)) / k, late = std::exp(-k * 0.08) / k;
    EXPECT_NEAR(Value(tab, "C80", 1000), 10 * std::log10(early / late), 1e-3);
}

// Skipping the per-batch values changes neither the value nor the interval (the jackknife
// uses only the leave-one-out replicates), and per-batch values are means-consistent: for
// noise-free identical batches each equals the all-ray value.
TEST(HistogramMetrics, PerBatchValuesAreOptional) {
    hw::ReceiverPaths paths;
    hw::ReceiverHistogram h = ExponentialHistogram(1.0, 2.0);
    for (size_t i = 0; i < h.energy.size(); ++i) h.energy[i] *= 1.0f + 0.3f * ((i * 2654435761u) % 7 == 0);
    hw::HistogramMetricsOptions on, off;
    off.perBatchValues = false;
    const auto a = hw::ParametersFromHistogram(paths, h, on), b = hw::ParametersFromHistogram(paths, h, off);
    ASSERT_EQ(a.values.size(), b.values.size());
    for (size_t i = 0; i < a.values.size(); ++i) {
        EXPECT_EQ(a.values[i].value, b.values[i].value) << a.values[i].parameter;
        EXPECT_EQ(a.values[i].ci95, b.values[i].ci95) << a.values[i].parameter;
    }
    const auto c = hw::ParametersFromHistogram(paths, ExponentialHistogram(1.0, 2.0), on);
    for (double v : c.Find("C80", 1000)->perBatch) EXPECT_NEAR(v, *c.Find("C80", 1000)->value, 1e-9);
}

// Rays that all died before the end of the histogram leave zeros, not a decay: the record is
// read as ending there, so a decay cut at 30 dB refuses T30 instead of fitting a truncated
// Schroeder curve (Schroeder 1965 integration needs the whole decay or a tail).
TEST(HistogramMetrics, TracerEnergyEndingEarlyIsNotSilence) {
    hw::ReceiverPaths paths;
    hw::ReceiverHistogram h = ExponentialHistogram(1.0, 3.0);
    for (int i = 500; i < h.binCount; ++i)  // 0.5 s: 30 dB down
        for (int b = 0; b < hw::kBatchCount; ++b)
            for (int band = 0; band < hw::kBandCount; ++band)
                h.energy[(static_cast<size_t>(b) * h.binCount + i) * hw::kBandCount + band] = 0;
    const hw::ParameterTable tab = hw::ParametersFromHistogram(paths, h, {});
    const hw::ParameterValue* t30 = tab.Find("T30", 1000);
    EXPECT_FALSE(t30->value);
    EXPECT_NE(t30->note.find("tracer's energy ends"), std::string::npos) << t30->note;
    EXPECT_NEAR(Value(tab, "EDT", 1000), 1.0, 1e-3);  // 30 dB is enough for EDT (20 dB)
}
