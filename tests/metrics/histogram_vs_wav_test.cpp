// The two input paths of the parameters against each other on the demo theatre (issue 7):
// the same seats' specular paths + tracer histograms analysed directly (histogram path) and
// as synthesized mono impulse responses (WAV path: octave filters, noise analysis, Schroeder
// curve). Both claim to compute ISO 3382-1 parameters of the same response, so their mean
// difference over seats must stay below a quarter of a JND (ISO 3382-1:2009 Table A.1, as in
// kJndTable); the per-seat spread is reported (it holds the synthesis' Poisson noise and
// each seat's interference of its reflections).
#include <gtest/gtest.h>

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdio>
#include <map>
#include <memory>
#include <string>
#include <vector>

#include <tbb/parallel_for.h>

#include "hallwright/air.h"
#include "hallwright/image_sources.h"
#include "hallwright/metrics.h"
#include "hallwright/ray_tracer.h"
#include "hallwright/response.h"
#include "hallwright/room.h"
#include "hallwright/wav.h"
#include "hallwright/wav_metrics.h"
#include "test_support.h"

namespace hallwright {
namespace {

/* What the two paths are held to, and why they agree (issue 7):
   - The synthesized IR gives each reflection a pseudo-random phase (response.h,
     coherentReflections): the data carry no phase, and an in-phase sum made the 500 Hz C50,
     C80, D50 and Ts of every stalls seat follow the same interference with the stage-floor
     reflection (1.1-1.6 ms after the direct sound, near antiphase at 500 Hz), a mean bias of
     up to 0.57 JND. Random phases leave each seat's interference (the per-seat spread) but
     no bias in the band energies.
   - EDT is a nonlinear function of the early energy, so that per-seat spread still gives
     it a small bias of its own (about +0.1 JND at 500 Hz over 3000 seat draws); the mean's
     standard error with all 707 seats is about 0.05 JND, so the 0.25 JND limit stays clear of
     chance.
   - The histogram path reads its decay curves through the analysis filter's skirts, as the
     WAV path's class 1 filter does (without that the 250 Hz band's slower decay lengthened
     the WAV's 500 Hz T20 by 0.3 JND). */
struct Stats {
    std::vector<double> jnd;  // per seat (WAV - histogram) / JND at the histogram value
    int missingHist = 0, missingWav = 0;
};

/* The stages as `simulate` wires them (cli/simulate.cpp) for source 0 of the demo theatre and
   the given seats (all when empty): image sources, 16 000 rays (modest: both paths read the
   same histogram, so its noise is shared), and the synthesis context. */
struct TheatreRun {
    std::unique_ptr<Room> room;
    std::vector<int> seats;
    std::vector<ReceiverPaths> paths;
    TracerResult traced;
    SynthesisContext ctx;
    std::string error;  // empty when every stage ran
};

constexpr int64_t kTheatreRays = 16000;

TheatreRun RunTheatre(int seatsPerZone) {
    TheatreRun run;
    Diagnostics diag;
    run.room = LoadRoom(test::SourcePath("scenes/theatre/scene.toml"), diag);
    if (!run.room) {
        run.error = diag.ToString();
        return run;
    }
    const Scene& scene = run.room->scene;
    std::map<std::string, std::vector<int>> byZone;
    for (int i = 0; i < static_cast<int>(scene.receivers.size()); ++i) byZone[scene.receivers[i].zone].push_back(i);
    for (const auto& [zone, list] : byZone) {
        const int n = seatsPerZone > 0 ? std::min<int>(seatsPerZone, static_cast<int>(list.size()))
                                       : static_cast<int>(list.size());
        for (int k = 0; k < n; ++k) run.seats.push_back(list[(k * list.size()) / n]);
    }
    std::sort(run.seats.begin(), run.seats.end());
    run.paths = ComputeImageSources(scene, run.room->geometry, 0, run.seats, ImageSourceOptionsFrom(scene.settings), diag);
    TracerOptions to;
    to.rays = kTheatreRays;
    to.seed = scene.settings.seed;
    to.imageOrder = scene.settings.imageOrder;
    to.durationS = scene.settings.durationS;
    to.receivers = run.seats;
    run.traced = TraceSource(*run.room, 0, to, diag);
    if (diag.HasErrors() || run.traced.histograms.size() != run.seats.size()) run.error = diag.ToString();
    run.ctx.sampleRate = scene.settings.sampleRate;
    run.ctx.roomVolumeM3 = run.room->geometry.Volume();
    run.ctx.speedOfSound = SpeedOfSound(scene.air.temperatureC);
    run.ctx.seed = scene.settings.seed;
    run.ctx.source = 0;
    return run;
}

TEST(HistogramVsWavValidation, DemoTheatreMeanBiasWithinQuarterJndAtEverySeat) {
    const TheatreRun run = RunTheatre(0);
    ASSERT_TRUE(run.error.empty()) << run.error;
    const Scene& scene = run.room->scene;
    const std::vector<int>& seats = run.seats;
    const auto& paths = run.paths;
    const TracerResult& traced = run.traced;
    const SynthesisContext& ctx = run.ctx;
    ASSERT_EQ(seats.size(), scene.receivers.size());
    ASSERT_GE(seats.size(), 500u);

    const std::vector<int> bands = {3, 4, 5};  // 500, 1000, 2000 Hz
    const std::vector<std::string> params = {"EDT", "T20", "T30", "C50", "C80", "D50", "Ts", "G"};
    // Both tables per seat, in parallel; compared in seat order below.
    std::vector<ParameterTable> hist(seats.size()), measured(seats.size());
    std::vector<std::string> errors(seats.size());
    tbb::parallel_for(size_t(0), seats.size(), [&](size_t i) {
        const int r = seats[i];
        HistogramMetricsOptions ho;
        ho.bands = bands;
        ho.perBatchValues = false;
        ho.perBandMti = false;
        ho.sourceDirection = (scene.sources[0].position - scene.receivers[r].position).normalized();
        hist[i] = ParametersFromHistogram(paths[i], traced.histograms[i], ho);
        SynthesisContext c = ctx;
        c.receiver = r;
        Diagnostics sd;
        const ImpulseResponse ir = Synthesize(paths[i], traced.histograms[i], c, sd);
        if (sd.HasErrors()) {
            errors[i] = sd.ToString();
            return;
        }
        WavData wav;
        wav.sampleRate = ir.sampleRate;
        wav.channels = 1;
        wav.samples = ir.samples;
        WavMetricsOptions wo;
        wo.bands = bands;
        wo.sti = false;
        wo.referenceEnergy = ir.referenceEnergy;
        Diagnostics wd;
        measured[i] = ParametersFromWav(wav, wo, wd);
        if (wd.HasErrors()) errors[i] = wd.ToString();
    });
    std::map<std::pair<std::string, int>, Stats> stats;
    for (size_t i = 0; i < seats.size(); ++i) {
        ASSERT_TRUE(errors[i].empty()) << errors[i];
        for (int band : bands)
            for (const std::string& p : params) {
                Stats& s = stats[{p, band}];
                const ParameterValue* a = hist[i].Find(p, kNominalBandHz[band]);
                const ParameterValue* b = measured[i].Find(p, kNominalBandHz[band]);
                ASSERT_TRUE(a && b) << p;
                if (!a->value) ++s.missingHist;
                if (!b->value) ++s.missingWav;
                if (!a->value || !b->value) continue;
                const auto jnd = JndAt(p, *a->value);
                ASSERT_TRUE(jnd && *jnd > 0) << p;
                s.jnd.push_back((*b->value - *a->value) / *jnd);
            }
    }

    std::printf("%zu seats, %lld rays: WAV path - histogram path, in JND (ISO 3382-1 Table A.1)\n",
                seats.size(), static_cast<long long>(kTheatreRays));
    std::printf("%-5s %5s %9s %9s %9s %6s\n", "param", "band", "mean", "sd", "max|d|", "seats");
    for (const std::string& p : params)
        for (int band : bands) {
            const Stats& s = stats[{p, band}];
            double mean = 0, sq = 0, worst = 0;
            for (double d : s.jnd) mean += d, worst = std::max(worst, std::fabs(d));
            const double n = static_cast<double>(s.jnd.size());
            mean /= std::max(n, 1.0);
            for (double d : s.jnd) sq += (d - mean) * (d - mean);
            const double sd = n > 1 ? std::sqrt(sq / (n - 1)) : 0.0;
            std::printf("%-5s %5d %+9.3f %9.3f %9.3f %6zu\n", p.c_str(), kNominalBandHz[band], mean, sd, worst,
                        s.jnd.size());
            RecordProperty(p + "_" + std::to_string(kNominalBandHz[band]) + "_mean_jnd", std::to_string(mean));
            RecordProperty(p + "_" + std::to_string(kNominalBandHz[band]) + "_sd_jnd", std::to_string(sd));
            // Both paths must give a value wherever the other does (same response).
            EXPECT_EQ(s.missingHist, s.missingWav) << p << " at " << kNominalBandHz[band] << " Hz";
            ASSERT_GE(s.jnd.size(), seats.size() * 9 / 10) << p << " at " << kNominalBandHz[band] << " Hz";
            EXPECT_LE(std::fabs(mean), 0.25) << p << " at " << kNominalBandHz[band] << " Hz";
        }
}

// LF (ISO 3382-1 A.2.2) from the AmbiX files against the histogram path's LF, 120 seats of the
// demo theatre (40 per zone), facing as in the scene. The lateral figure-of-eight of the WAV
// path is -sin(phi) X + cos(phi) Y with phi the source azimuth in the head frame (as the
// sidecar gives it to `analyze`), the histogram path's axis is horizontal and perpendicular to
// the source direction: the same axis. Measured mean bias: -0.003, -0.012, -0.006 at 500,
// 1000, 2000 Hz (JND 0.05, ISO 3382-1 Table A.1), per-seat rms 0.04-0.05. Held to half a JND,
// not a quarter: the late part draws each Dirac's direction uniformly within its cell of the
// tracer's directional record (8 azimuth sectors x 8 equal-area elevation bands), which
// spreads strongly lateral energy over a 45 degree sector and lowers the late part's lateral
// energy by about a tenth (direct sound + late part alone: 0.153 against 0.169).
TEST(HistogramVsAmbixValidation, DemoTheatreLfMeanBiasWithinHalfJnd) {
    const TheatreRun run = RunTheatre(40);
    ASSERT_TRUE(run.error.empty()) << run.error;
    const Scene& scene = run.room->scene;
    const std::vector<int>& seats = run.seats;
    const auto& paths = run.paths;
    const TracerResult& traced = run.traced;
    const SynthesisContext& ctx = run.ctx;
    ASSERT_GE(seats.size(), 100u);

    const std::vector<int> bands = {3, 4, 5};
    std::vector<std::array<double, kBandCount>> hist(seats.size()), wav(seats.size());
    std::vector<std::string> errors(seats.size());
    tbb::parallel_for(size_t(0), seats.size(), [&](size_t i) {
        const int r = seats[i];
        const Vec3 source = (scene.sources[0].position - scene.receivers[r].position).normalized();
        HistogramMetricsOptions ho;
        ho.bands = bands;
        ho.perBatchValues = false;
        ho.perBandMti = false;
        ho.sourceDirection = source;
        const ParameterTable h = ParametersFromHistogram(paths[i], traced.histograms[i], ho);
        SynthesisContext c = ctx;
        c.receiver = r;
        const Vec3 facing = scene.receivers[r].facing;
        Diagnostics sd;
        const ImpulseResponse ir = SynthesizeAmbix(paths[i], traced.histograms[i], c, facing, sd);
        if (sd.HasErrors()) {
            errors[i] = sd.ToString();
            return;
        }
        WavData w;
        w.sampleRate = ir.sampleRate;
        w.channels = ir.channels;
        w.samples = ir.samples;
        WavMetricsOptions wo;
        wo.bands = bands;
        wo.sti = false;
        wo.layout = ChannelLayout::kAmbix;
        // Source azimuth in the head frame (internal y up), counter-clockwise from the front.
        const Vec3 up(0, 1, 0);
        const Vec3 f = (facing - facing.dot(up) * up).normalized(), d = (source - source.dot(up) * up).normalized();
        wo.sourceAzimuthDeg = std::atan2(d.dot(up.cross(f)), d.dot(f)) * 180.0 / M_PI;
        Diagnostics wd;
        const ParameterTable m = ParametersFromWav(w, wo, wd);
        for (int b : bands) {
            const ParameterValue *x = h.Find("LF", kNominalBandHz[b]), *y = m.Find("LF", kNominalBandHz[b]);
            if (!x || !y || !x->value || !y->value) {
                errors[i] = "LF missing at " + std::to_string(kNominalBandHz[b]) + " Hz: " + (x ? x->note : "") +
                            " / " + (y ? y->note : "");
                return;
            }
            hist[i][b] = *x->value;
            wav[i][b] = *y->value;
        }
    });
    for (const std::string& e : errors) ASSERT_TRUE(e.empty()) << e;
    const double jnd = *JndAt("LF", 0.2);
    for (int b : bands) {
        double meanH = 0, meanW = 0, sq = 0;
        for (size_t i = 0; i < seats.size(); ++i) {
            meanH += hist[i][b] / seats.size();
            meanW += wav[i][b] / seats.size();
            sq += std::pow(wav[i][b] - hist[i][b], 2) / seats.size();
        }
        std::printf("LF %4d Hz: histogram %.3f, AmbiX %.3f, bias %+.2f JND, per-seat rms %.2f JND (%zu seats)\n",
                    kNominalBandHz[b], meanH, meanW, (meanW - meanH) / jnd, std::sqrt(sq) / jnd, seats.size());
        EXPECT_LE(std::fabs(meanW - meanH), 0.5 * jnd) << kNominalBandHz[b] << " Hz";
    }
}

// The histogram path's decay curve sees the neighbouring bands through the analysis filter's
// skirts, as the WAV path's class 1 filter does. A synthetic diffuse decay with T = 2 s in the
// 250 Hz band and T = 1 s in every other band (ideal exponential histograms, REFERENCES Part B
// §2, no specular part), synthesized and analysed as a WAV over 8 receivers (Dirac-sequence
// seeds): the WAV's 500 Hz T30 is longer than the band's own 1 s, and the histogram path
// must follow it, not the ideal band.
TEST(HistogramVsWav, SlowerNeighbourBandLengthensT30OnBothPaths) {
    constexpr double kVolume = 8000, kC = 343.0, kDuration = 3.0;
    Bands t60 = Bands::Constant(1.0);
    t60[2] = 2.0;  // 250 Hz
    ReceiverHistogram h;
    h.binCount = static_cast<int>(kDuration / kBinWidthS);
    h.directDelayS = 0.02;
    h.energy.assign(static_cast<size_t>(kBatchCount) * h.binCount * kBandCount, 0.0f);
    for (int batch = 0; batch < kBatchCount; ++batch)
        for (int k = 0; k < h.binCount; ++k) {
            const double t0 = std::max(k * kBinWidthS, h.directDelayS), t1 = (k + 1) * kBinWidthS;
            if (t1 <= t0) continue;
            for (int b = 0; b < kBandCount; ++b) {
                const double rate = 13.815510557964274 / t60[b];  // ln(10^6) / T
                h.energy[(static_cast<size_t>(batch) * h.binCount + k) * kBandCount + b] =
                    static_cast<float>(1e-3 * (std::exp(-rate * (t0 - h.directDelayS)) - std::exp(-rate * (t1 - h.directDelayS))));
            }
        }
    HistogramMetricsOptions ho;
    ho.bands = {3};
    ho.perBatchValues = false;
    ho.perBandMti = false;
    const ParameterTable hist = ParametersFromHistogram(ReceiverPaths{}, h, ho);
    const ParameterValue* th = hist.Find("T30", 500);
    ASSERT_TRUE(th && th->value) << (th ? th->note : "no row");
    double wavMean = 0;
    constexpr int kReceivers = 8;
    for (int r = 0; r < kReceivers; ++r) {
        SynthesisContext ctx;
        ctx.roomVolumeM3 = kVolume;
        ctx.speedOfSound = kC;
        ctx.receiver = r;
        const ImpulseResponse ir = Synthesize(ReceiverPaths{}, h, ctx);
        WavData wav;
        wav.sampleRate = ir.sampleRate;
        wav.channels = 1;
        wav.samples = ir.samples;
        WavMetricsOptions wo;
        wo.bands = {3};
        wo.sti = false;
        Diagnostics wd;
        const ParameterTable m = ParametersFromWav(wav, wo, wd);
        const ParameterValue* tw = m.Find("T30", 500);
        ASSERT_TRUE(tw && tw->value) << (tw ? tw->note : "no row");
        wavMean += *tw->value / kReceivers;
    }
    std::printf("500 Hz T30: band's own 1.000 s, WAV path %.4f s, histogram path %.4f s\n", wavMean, *th->value);
    EXPECT_GT(wavMean, 1.01);  // the leakage is there in the WAV
    // Same response, same filter: within a quarter of the T30 JND (5 %, ISO 3382-1 Table A.1).
    EXPECT_NEAR(*th->value, wavMean, 0.25 * 0.05 * wavMean);
}

}  // namespace
}  // namespace hallwright
