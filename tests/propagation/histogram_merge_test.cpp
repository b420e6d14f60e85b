#include <gtest/gtest.h>

#include "hallwright/propagation.h"

namespace hallwright {
namespace {

/* A histogram of `bins` bins whose every batch/bin/band holds `value`. */
ReceiverHistogram Filled(int bins, float value) {
    ReceiverHistogram h;
    h.binCount = bins;
    h.energy.assign(static_cast<size_t>(kBatchCount) * bins * kBandCount, value);
    h.lateralSq.assign(static_cast<size_t>(kBatchCount) * kLateralBins * kBandCount, value);
    h.lateralAbs = h.lateralSq;
    h.directionEnergy.assign(kDirectionCells, value);
    return h;
}

// Pooling two unbiased estimates of one mean with weights proportional to their sample
// sizes gives the estimate of the pooled sample (elementary statistics): 1000 rays at 2.0
// and 3000 rays at 1.0 pool to (2000 + 3000) / 4000 = 1.25.
TEST(MergeTracerRound, RayWeightedMeanOfTheRounds) {
    ReceiverHistogram total = Filled(10, 2.0f);
    ASSERT_TRUE(MergeTracerRound(total, 1000, Filled(10, 1.0f), 3000));
    EXPECT_FLOAT_EQ(total.Energy(3, 5, 2), 1.25f);
    EXPECT_FLOAT_EQ(total.lateralSq[7], 1.25f);
    EXPECT_FLOAT_EQ(total.directionEnergy[0], 1.25f);
}

TEST(MergeTracerRound, RefusesHistogramsOfDifferentLength) {
    ReceiverHistogram total = Filled(10, 2.0f);
    EXPECT_FALSE(MergeTracerRound(total, 1000, Filled(11, 1.0f), 3000));
    EXPECT_FLOAT_EQ(total.Energy(0, 0, 0), 2.0f);
}

}  // namespace
}  // namespace hallwright
