// `hallwright auralize` end to end on files written by the test: output layout and rate, the
// playback caution, and bad input that must fail without leaving an output file.
#include <cmath>
#include <filesystem>
#include <numbers>

#include <gtest/gtest.h>

#include "cli/cli_support.h"
#include "hallwright/wav.h"
#include "test_support.h"

namespace hallwright {
namespace {

namespace fs = std::filesystem;
using test::RunHallwright;

/* A decaying two-channel (binaural-like) IR at 48 kHz with a sidecar naming its layout. */
std::string WriteBinauralIr(const std::string& dir) {
    WavData ir;
    ir.sampleRate = 48000;
    ir.channels = 2;
    const size_t frames = 4800;
    ir.samples.resize(frames * 2);
    for (size_t n = 0; n < frames; ++n) {
        const double decay = std::exp(-double(n) / 800);
        ir.samples[2 * n] = float(decay * std::sin(0.37 * double(n)));
        ir.samples[2 * n + 1] = float(0.7 * decay * std::sin(0.41 * double(n) + 1));
    }
    const std::string path = dir + "/hall.wav";
    Diagnostics diag;
    EXPECT_TRUE(WriteWav(path, ir, WavFormat::kFloat32, diag)) << diag.ToString();
    test::WriteFile(dir, "hall.wav.json",
                    R"({"format": "hallwright-ir-sidecar", "version": 1, "channel_layout": "binaural-lr",
                        "channels": 2, "sample_rate": 48000,
                        "seat": {"name": "r03-s07", "zone": "stalls", "position": [0, 0, 0], "facing": [1, 0, 0]},
                        "source": {"name": "S1", "position": [5, 0, 0]}})");
    return path;
}

/* A 0.3 s tone at `rate` with `channels` identical channels. */
std::string WriteDry(const std::string& dir, const std::string& name, int rate, int channels,
                     double amplitude = 0.5, double hz = 300) {
    WavData w;
    w.sampleRate = rate;
    w.channels = channels;
    const size_t frames = size_t(0.3 * rate);
    w.samples.resize(frames * channels);
    for (size_t n = 0; n < frames; ++n)
        for (int c = 0; c < channels; ++c)
            w.samples[n * channels + c] = float(amplitude * std::sin(2 * std::numbers::pi * hz * double(n) / rate));
    const std::string path = dir + "/" + name;
    Diagnostics diag;
    EXPECT_TRUE(WriteWav(path, w, WavFormat::kFloat32, diag)) << diag.ToString();
    return path;
}

TEST(AuralizeCommand, WritesTheIrLayoutAndPrintsTheCaution) {
    const std::string dir = test::TempDir("auralize-cli-ok");
    const std::string ir = WriteBinauralIr(dir), dry = WriteDry(dir, "voice.wav", 44100, 2);
    const std::string out = dir + "/heard.wav";
    auto r = RunHallwright("auralize '" + ir + "' '" + dry + "' '" + out + "' --wav-format pcm24");
    ASSERT_EQ(r.exitCode, 0) << r.err;
    Diagnostics diag;
    auto wav = ReadWav(out, diag);
    ASSERT_TRUE(wav) << diag.ToString();
    EXPECT_EQ(wav->channels, 2);
    EXPECT_EQ(wav->sampleRate, 48000);
    // 0.3 s resampled to 48 kHz (14400 frames) + 4800 - 1 IR frames.
    EXPECT_NEAR(double(wav->FrameCount()), 14400.0 + 4800 - 1, 1.0);
    double peak = 0;
    for (float v : wav->samples) peak = std::max(peak, double(std::fabs(v)));
    EXPECT_NEAR(20 * std::log10(peak), -1.0, 0.001);  // 24-bit quantisation: < 1e-6 dB at -1 dBFS
    EXPECT_NE(r.out.find("start playback quietly"), std::string::npos) << r.out;
    EXPECT_NE(r.out.find("not calibrated"), std::string::npos) << r.out;
    EXPECT_NE(r.out.find("binaural"), std::string::npos) << r.out;
    EXPECT_NE(r.out.find("44100 Hz -> 48000 Hz"), std::string::npos) << r.out;
    EXPECT_NE(r.out.find("stereo -> mono"), std::string::npos) << r.out;
    EXPECT_NE(r.out.find("gain"), std::string::npos) << r.out;

    // With the calibrated level kept, the caution is still printed. The IR's sum of |h| is
    // below 800 (its envelope sums to 1 / (1 - exp(-1/800))), so amplitude 0.001 stays below 0.8.
    auto keep = RunHallwright("auralize '" + ir + "' '" + WriteDry(dir, "quiet.wav", 48000, 1, 0.001) + "' '" + dir +
                              "/kept.wav' --keep-calibration");
    ASSERT_EQ(keep.exitCode, 0) << keep.err;
    EXPECT_NE(keep.out.find("start playback quietly"), std::string::npos) << keep.out;
    EXPECT_NE(keep.out.find("calibrated level kept"), std::string::npos) << keep.out;
}

TEST(AuralizeCommand, BadInputFailsNamingTheFileAndLeavesNoOutput) {
    const std::string dir = test::TempDir("auralize-cli-bad");
    const std::string ir = WriteBinauralIr(dir), out = dir + "/never.wav";
    auto expectFailure = [&](const std::string& args, const std::string& named) {
        auto r = RunHallwright(args);
        EXPECT_NE(r.exitCode, 0) << args;
        EXPECT_NE(r.err.find(named), std::string::npos) << "expected " << named << " in:\n" << r.err;
        EXPECT_FALSE(fs::exists(out)) << args;
        for (const auto& e : fs::directory_iterator(dir))  // no temporary left either
            EXPECT_EQ(e.path().filename().string().find(".never.wav"), std::string::npos) << e.path();
    };
    const std::string missing = dir + "/no-such-voice.wav";
    expectFailure("auralize '" + ir + "' '" + missing + "' '" + out + "'", "no-such-voice.wav");
    const std::string three = WriteDry(dir, "three.wav", 48000, 3);
    expectFailure("auralize '" + ir + "' '" + three + "' '" + out + "'", "three.wav");
    expectFailure("auralize '" + dir + "/no-ir.wav' '" + WriteDry(dir, "v.wav", 48000, 1) + "' '" + out + "'",
                  "no-ir.wav");
    // A loud calibrated result is refused rather than clipped: a tone at the IR's left-channel
    // resonance (0.37 rad/sample) gains about 1 / (2 (1 - exp(-1/800))) = 400 times.
    const double resonanceHz = 0.37 * 48000 / (2 * std::numbers::pi);
    expectFailure("auralize '" + ir + "' '" + WriteDry(dir, "loud.wav", 48000, 1, 0.9, resonanceHz) + "' '" + out +
                      "' --keep-calibration",
                  "--keep-calibration");
    auto positive = RunHallwright("auralize '" + ir + "' '" + dir + "/v.wav' '" + out + "' --peak-dbfs 3");
    EXPECT_EQ(positive.exitCode, 2);
    EXPECT_FALSE(fs::exists(out));
}

}  // namespace
}  // namespace hallwright
