// The two input paths of the parameters against each other on the demo theatre (issue 7):
// the same seats' specular paths + tracer histograms analysed directly (histogram path) and
// as synthesized mono impulse responses (WAV path: octave filters, noise analysis, Schroeder
// curve). Both claim to compute ISO 3382-1 parameters of the same response, so their mean
// difference over seats must stay below a quarter of a JND (ISO 3382-1:2009 Table A.1, as in
// kJndTable); the per-seat spread is reported (it contains the synthesis' Poisson noise).
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <map>
#include <string>
#include <vector>

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

/* Up to `perZone` seats of each zone, evenly spread over the zone's seat list. */
std::vector<int> SeatSubset(const Scene& scene, int perZone) {
    std::map<std::string, std::vector<int>> byZone;
    for (int i = 0; i < static_cast<int>(scene.receivers.size()); ++i) byZone[scene.receivers[i].zone].push_back(i);
    std::vector<int> out;
    for (const auto& [zone, seats] : byZone) {
        const int n = std::min<int>(perZone, static_cast<int>(seats.size()));
        for (int k = 0; k < n; ++k) out.push_back(seats[(k * seats.size()) / n]);
    }
    std::sort(out.begin(), out.end());
    return out;
}

/* Known, explained discrepancies above 0.25 JND (issue 7 is not met for these; they are
   held below 1 JND so that they cannot grow unnoticed):
   - 500 Hz C50/C80/D50/Ts: the synthesized IR adds the specular paths coherently (pressure),
     the histogram adds energies. In the stalls the stage/floor reflection arrives 1.1-1.6 ms
     after the direct sound, i.e. in antiphase at 500 Hz, so the WAV's early 500 Hz energy is
     lower (synthesizing each path alone and summing energies agrees with the histogram to
     0.01 dB; all paths together: -0.46 dB mean, +-1.3 dB per seat). A property of the
     synthesis (engine/response), not of either parameter computation.
   - 500 Hz T20: leakage of the 250 Hz band (T 1.60 s against 1.28 s at 500 Hz, Eyring)
     through the crossovers of the synthesis bank and the IEC 61260-1 class 1 filter skirts:
     the WAV's 500 Hz decay bends toward the longer 250 Hz decay below about -20 dB, as a
     measurement of such a room would.
   - 2 kHz EDT: the WAV path's EDT is 2-2.5 % shorter; the same offset appears with flat
     spectra (no leakage) and with the reflections given to the tracer part (no coherent
     specular sum), so its cause lies in the shape the synthesized late part gives the first
     10 dB of the decay; not found. */
const std::map<std::pair<std::string, int>, const char*> kOpen = {
    {{"C50", 500}, "coherent specular sum in the synthesized IR"},
    {{"C80", 500}, "coherent specular sum in the synthesized IR"},
    {{"D50", 500}, "coherent specular sum in the synthesized IR"},
    {{"Ts", 500}, "coherent specular sum in the synthesized IR"},
    {{"T20", 500}, "250 Hz leakage into the 500 Hz analysis band"},
    {{"EDT", 2000}, "not found (synthesized late part, first 10 dB)"},
};

struct Stats {
    std::vector<double> jnd;  // per seat (WAV - histogram) / JND at the histogram value
    int missingHist = 0, missingWav = 0;
};

TEST(HistogramVsWavValidation, DemoTheatreMeanBiasWithinQuarterJndExceptListedPairs) {
    Diagnostics loadDiag;
    auto room = LoadRoom(test::SourcePath("scenes/theatre/scene.toml"), loadDiag);
    ASSERT_TRUE(room) << loadDiag.ToString();
    const Scene& scene = room->scene;
    const std::vector<int> seats = SeatSubset(scene, 15);
    ASSERT_GE(seats.size(), 30u);

    // Stages as `simulate` wires them (cli/simulate.cpp), for source 0 and the chosen seats.
    Diagnostics diag;
    const auto paths =
        ComputeImageSources(scene, room->geometry, 0, seats, ImageSourceOptionsFrom(scene.settings), diag);
    ASSERT_FALSE(diag.HasErrors()) << diag.ToString();
    TracerOptions to;
    to.rays = 16000;  // modest: both paths read the same histogram, so its noise is shared
    to.seed = scene.settings.seed;
    to.imageOrder = scene.settings.imageOrder;
    to.durationS = scene.settings.durationS;
    to.receivers = seats;
    const TracerResult traced = TraceSource(*room, 0, to, diag);
    ASSERT_FALSE(diag.HasErrors()) << diag.ToString();
    ASSERT_EQ(traced.histograms.size(), seats.size());

    SynthesisContext ctx;
    ctx.sampleRate = scene.settings.sampleRate;
    ctx.roomVolumeM3 = room->geometry.Volume();
    ctx.speedOfSound = SpeedOfSound(scene.air.temperatureC);
    ctx.seed = scene.settings.seed;
    ctx.source = 0;

    const std::vector<int> bands = {3, 4, 5};  // 500, 1000, 2000 Hz
    const std::vector<std::string> params = {"EDT", "T20", "T30", "C50", "C80", "D50", "Ts", "G"};
    std::map<std::pair<std::string, int>, Stats> stats;
    for (size_t i = 0; i < seats.size(); ++i) {
        const int r = seats[i];
        HistogramMetricsOptions ho;
        ho.bands = bands;
        ho.perBatchValues = false;
        ho.perBandMti = false;
        ho.sourceDirection = (scene.sources[0].position - scene.receivers[r].position).normalized();
        const ParameterTable hist = ParametersFromHistogram(paths[i], traced.histograms[i], ho);

        ctx.receiver = r;
        Diagnostics sd;
        const ImpulseResponse ir = Synthesize(paths[i], traced.histograms[i], ctx, sd);
        ASSERT_FALSE(sd.HasErrors()) << sd.ToString();
        WavData wav;
        wav.sampleRate = ir.sampleRate;
        wav.channels = 1;
        wav.samples = ir.samples;
        WavMetricsOptions wo;
        wo.bands = bands;
        wo.sti = false;
        wo.referenceEnergy = ir.referenceEnergy;
        Diagnostics wd;
        const ParameterTable measured = ParametersFromWav(wav, wo, wd);
        ASSERT_FALSE(wd.HasErrors()) << wd.ToString();

        for (int band : bands)
            for (const std::string& p : params) {
                Stats& s = stats[{p, band}];
                const ParameterValue* a = hist.Find(p, kNominalBandHz[band]);
                const ParameterValue* b = measured.Find(p, kNominalBandHz[band]);
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
                seats.size(), static_cast<long long>(to.rays));
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
            const auto open = kOpen.find({p, kNominalBandHz[band]});
            if (open == kOpen.end()) {
                EXPECT_LE(std::fabs(mean), 0.25) << p << " at " << kNominalBandHz[band] << " Hz";
            } else {
                std::printf("      OPEN (bias above 0.25 JND, cause: %s)\n", open->second);
                EXPECT_LE(std::fabs(mean), 1.0) << p << " at " << kNominalBandHz[band] << " Hz";
            }
        }
}

}  // namespace
}  // namespace hallwright
