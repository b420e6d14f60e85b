// A listening set keeps the seats' level differences (listening.h).
#include "hallwright/listening.h"

#include <cmath>

#include <gtest/gtest.h>

namespace hallwright {
namespace {

WavData Mono(std::vector<float> s, int rate = 48000) {
    WavData w;
    w.sampleRate = rate;
    w.channels = 1;
    w.samples = std::move(s);
    return w;
}

TEST(ListeningSet, CommonGainKeepsTheLevelDifferenceBetweenSeats) {
    // Two Dirac IRs 6.02 dB apart (amplitude 0.02 and 0.01): the renders are the dry signal
    // times each amplitude times one gain, so their peaks differ by 20 lg 2 = 6.02 dB (the
    // convolution with a scaled Dirac is the scaled signal, by definition).
    std::vector<float> dry(2000);
    for (size_t n = 0; n < dry.size(); ++n) dry[n] = static_cast<float>(0.5 * std::sin(0.05 * n));
    const WavData loud = Mono({0.0f, 0.02f, 0.0f}), quiet = Mono({0.0f, 0.01f, 0.0f});
    Diagnostics diag;
    const ListeningSet set = RenderListeningSet(Mono(dry), {quiet, loud}, -1.0, diag);
    ASSERT_TRUE(set.ok) << diag.ToString();
    ASSERT_EQ(set.renders.size(), 2u);
    EXPECT_NEAR(set.peakDbfs[1], -1.0, 1e-4);
    EXPECT_NEAR(set.peakDbfs[1] - set.peakDbfs[0], 20 * std::log10(2.0), 1e-4);
    // Gain: 0.5 * 0.02 = 0.01 peak -> -1 dBFS needs 20 lg(0.891 / 0.01) = 39.0 dB.
    EXPECT_NEAR(set.gainDb, 20 * std::log10(std::pow(10.0, -1.0 / 20) / (0.5 * 0.02)), 1e-3);
    for (size_t n = 0; n + 1 < dry.size(); ++n)
        EXPECT_NEAR(set.renders[0].samples[n + 1], 0.5f * set.renders[1].samples[n + 1], 1e-6);
}

TEST(ListeningSet, NoImpulseResponseIsAnError) {
    Diagnostics diag;
    EXPECT_FALSE(RenderListeningSet(Mono({1.0f, 0.5f}), {}, -1.0, diag).ok);
    EXPECT_TRUE(diag.HasErrors());
}

}  // namespace
}  // namespace hallwright
