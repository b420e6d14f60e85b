#include "hallwright/bands.h"

#include <gtest/gtest.h>

namespace hallwright {
namespace {

// IEC 61260-1:2014, base-ten octaves: exact mid-band and edge frequencies (REFERENCES Part B §4).
TEST(Bands, ExactMidbandsAndEdgesFollowIec61260) {
    const double midband[kBandCount] = {63.096, 125.893, 251.189, 501.187, 1000, 1995.262, 3981.072, 7943.282};
    const double lower[kBandCount] = {44.668, 89.125, 177.828, 354.813, 707.946, 1412.538, 2818.383, 5623.413};
    const double upper[kBandCount] = {89.125, 177.828, 354.813, 707.946, 1412.538, 2818.383, 5623.413, 11220.185};
    for (int b = 0; b < kBandCount; ++b) {
        EXPECT_NEAR(ExactMidbandHz(b), midband[b], 1e-3) << b;
        EXPECT_NEAR(BandLowerEdgeHz(b), lower[b], 1e-3) << b;
        EXPECT_NEAR(BandUpperEdgeHz(b), upper[b], 1e-3) << b;
    }
    EXPECT_EQ(BandIndexOfNominal(1000).value(), 4);
    EXPECT_FALSE(BandIndexOfNominal(1001).has_value());
}

}  // namespace
}  // namespace hallwright
