// WAV read/write round trips through libsndfile.
#include "hallwright/wav.h"

#include <cmath>
#include <filesystem>

#include <gtest/gtest.h>

#include "test_support.h"

namespace hw = hallwright;

namespace {
hw::WavData TestSignal(int channels, size_t frames) {
    hw::WavData w;
    w.sampleRate = 44100;
    w.channels = channels;
    w.samples.resize(frames * channels);
    for (size_t i = 0; i < frames; ++i)
        for (int c = 0; c < channels; ++c)
            w.samples[i * channels + c] =
                static_cast<float>(0.9 * std::sin(0.001 * i * (c + 1) + c) * std::exp(-1e-4 * i));
    return w;
}
}  // namespace

TEST(Wav, Float32RoundTripIsExact) {
    const std::string dir = hw::test::TempDir("wav_float");
    const std::string path = dir + "/a.wav";
    const hw::WavData w = TestSignal(4, 5000);
    hw::Diagnostics diag;
    ASSERT_TRUE(hw::WriteWav(path, w, hw::WavFormat::kFloat32, diag)) << diag.ToString();
    auto r = hw::ReadWav(path, diag);
    ASSERT_TRUE(r) << diag.ToString();
    EXPECT_EQ(r->sampleRate, 44100);
    EXPECT_EQ(r->channels, 4);
    ASSERT_EQ(r->samples.size(), w.samples.size());
    for (size_t i = 0; i < w.samples.size(); ++i) ASSERT_EQ(r->samples[i], w.samples[i]) << i;
    // No temporary file is left beside the result.
    int files = 0;
    for (auto& e : std::filesystem::directory_iterator(dir)) files += e.is_regular_file();
    EXPECT_EQ(files, 1);
}

TEST(Wav, Pcm24QuantisationWithinOneAndAHalfSteps) {
    const std::string dir = hw::test::TempDir("wav_pcm24");
    const hw::WavData w = TestSignal(2, 3000);
    hw::Diagnostics diag;
    ASSERT_TRUE(hw::WriteWav(dir + "/b.wav", w, hw::WavFormat::kPcm24, diag));
    auto r = hw::ReadWav(dir + "/b.wav", diag);
    ASSERT_TRUE(r);
    // Rounding to 24 bits costs at most half a step of 2^-23; libsndfile writes with the scale
    // 2^23 - 1 and reads with 2^23, which adds at most |x| 2^-23 more (|x| < 1): 1.5 steps.
    const double step = std::ldexp(1.0, -23);
    double worst = 0;
    for (size_t i = 0; i < w.samples.size(); ++i)
        worst = std::max(worst, std::fabs(double(r->samples[i]) - w.samples[i]));
    EXPECT_LE(worst, 1.5 * step);
    EXPECT_GT(worst, 0.0);  // it really was quantised
}

TEST(Wav, MissingFileIsAnErrorNamingIt) {
    hw::Diagnostics diag;
    auto r = hw::ReadWav("/nonexistent/dir/none.wav", diag);
    EXPECT_FALSE(r);
    ASSERT_TRUE(diag.HasErrors());
    EXPECT_NE(diag.ToString().find("/nonexistent/dir/none.wav"), std::string::npos);
}

TEST(Wav, GarbageFileIsAnErrorNamingIt) {
    const std::string dir = hw::test::TempDir("wav_garbage");
    const std::string path = hw::test::WriteFile(dir, "junk.wav", "this is not a RIFF file at all");
    hw::Diagnostics diag;
    EXPECT_FALSE(hw::ReadWav(path, diag));
    ASSERT_TRUE(diag.HasErrors());
    EXPECT_NE(diag.ToString().find("junk.wav"), std::string::npos);
}

TEST(Wav, UnwritableDirectoryIsAnError) {
    hw::Diagnostics diag;
    EXPECT_FALSE(hw::WriteWav("/nonexistent/dir/x.wav", TestSignal(1, 10), hw::WavFormat::kFloat32,
                              diag));
    EXPECT_TRUE(diag.HasErrors());
    EXPECT_NE(diag.ToString().find("/nonexistent/dir/x.wav"), std::string::npos);
}

TEST(Wav, NonFiniteSampleIsRefused) {
    const std::string dir = hw::test::TempDir("wav_nan");
    hw::WavData w = TestSignal(1, 10);
    w.samples[3] = std::nanf("");
    hw::Diagnostics diag;
    EXPECT_FALSE(hw::WriteWav(dir + "/n.wav", w, hw::WavFormat::kFloat32, diag));
    EXPECT_FALSE(std::filesystem::exists(dir + "/n.wav"));
}
