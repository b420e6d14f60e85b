#include "hallwright/zones.h"

#include <cmath>

#include <gtest/gtest.h>

namespace hallwright {
namespace {

// Jackknife standard error of a mean equals the classical s / sqrt(n) (Efron & Tibshirani,
// An Introduction to the Bootstrap, 1993, §11.2, from memory): for replicates of the sample
// mean with one observation deleted, SE_jack = sqrt(sum (x_i - xbar)^2 / (n (n - 1))).
TEST(ZoneStatistics, JackknifeOfTheMeanEqualsClassicalStandardError) {
    const std::vector<double> x = {1.0, 2.5, 2.0, 4.0, 3.5, 1.5, 2.0, 3.0};
    const double n = x.size();
    double mean = 0;
    for (double v : x) mean += v / n;
    std::vector<double> replicates;
    for (size_t i = 0; i < x.size(); ++i) replicates.push_back((mean * n - x[i]) / (n - 1));
    double ss = 0;
    for (double v : x) ss += (v - mean) * (v - mean);
    EXPECT_NEAR(JackknifeStandardError(replicates), std::sqrt(ss / (n * (n - 1))), 1e-12);
}

// Student t quantiles (any statistics table): t(0.975, 7) = 2.365, t(0.975, 1) = 12.706.
TEST(ZoneStatistics, StudentQuantiles) {
    EXPECT_DOUBLE_EQ(StudentT975(7), 2.365);
    EXPECT_DOUBLE_EQ(StudentT975(1), 12.706);
    EXPECT_DOUBLE_EQ(StudentT975(100), 1.960);
}

// Hand computation: two seats with values 1 and 3 dB, replicates known. Zone mean 2, sd
// sqrt(2), min 1, max 3; replicate means are the seat-wise means per batch; the interval is
// 2.365 x jackknife SE of those. A seat with no value is left out.
TEST(ZoneStatistics, ZoneMeanAndIntervalByHand) {
    std::vector<SeatEstimate> seats(3);
    seats[0].value = 1.0;
    seats[0].replicates = {1.0, 1.1, 0.9, 1.0, 1.0, 1.2, 0.8, 1.0};
    seats[1].value = 3.0;
    seats[1].replicates = {3.0, 2.9, 3.1, 3.0, 3.2, 3.0, 2.8, 3.0};
    const ZoneStatistic z = SummarizeZone(seats);
    EXPECT_EQ(z.nSeats, 2);
    EXPECT_DOUBLE_EQ(z.mean, 2.0);
    EXPECT_NEAR(z.sd, std::sqrt(2.0), 1e-12);
    EXPECT_DOUBLE_EQ(z.min, 1.0);
    EXPECT_DOUBLE_EQ(z.max, 3.0);
    const std::vector<double> means = {2.0, 2.0, 2.0, 2.0, 2.1, 2.1, 1.8, 2.0};
    for (int j = 0; j < 8; ++j) EXPECT_NEAR(z.replicateMeans[j], means[j], 1e-12);
    // By hand: mean of replicate means 2.0, deviations 0,0,0,0,.1,.1,-.2,0: sum sq = 0.06;
    // SE = sqrt(7/8 x 0.06) = 0.229129; CI95 = 2.365 x SE = 0.541890.
    EXPECT_NEAR(z.ci95, 2.365 * std::sqrt(7.0 / 8.0 * 0.06), 1e-12);
}

// A seat with a non-finite replicate (its parameter failed in one batch) is left out, so the
// zone interval stays defined; the statistics are those of the other seats.
TEST(ZoneStatistics, SeatWithNonFiniteReplicateIsLeftOut) {
    std::vector<SeatEstimate> seats(2);
    seats[0].value = 1.0;
    seats[0].replicates.assign(8, 1.0);
    seats[1].value = 5.0;
    seats[1].replicates.assign(8, 5.0);
    seats[1].replicates[3] = std::nan("");
    const ZoneStatistic z = SummarizeZone(seats);
    EXPECT_EQ(z.nSeats, 1);
    EXPECT_DOUBLE_EQ(z.mean, 1.0);
    EXPECT_TRUE(std::isfinite(z.ci95));
}

// Differences in JNDs: absolute JND (C80: 1 dB, ISO 3382-1 Table A.1) and relative JND
// (EDT: 5 % of the mean, same table).
TEST(ZoneStatistics, DifferencesInAbsoluteAndRelativeJnds) {
    ZoneStatistic a, b;
    a.nSeats = b.nSeats = 4;
    a.mean = 2.0;
    b.mean = -1.0;
    a.replicateMeans = {2.0, 2.1, 1.9, 2.0, 2.0, 2.0, 2.0, 2.0};
    b.replicateMeans = {-1.0, -1.0, -1.0, -1.0, -1.0, -1.0, -1.0, -1.0};
    auto d = CompareZones(a, b, Jnd{1.0, false});
    ASSERT_TRUE(d);
    EXPECT_DOUBLE_EQ(d->difference, 3.0);
    EXPECT_DOUBLE_EQ(d->differenceJnd, 3.0);
    EXPECT_NEAR(d->ci95Jnd, 2.365 * std::sqrt(7.0 / 8.0 * 0.02), 1e-12);

    ZoneStatistic ea, eb;
    ea.nSeats = eb.nSeats = 1;
    ea.mean = 2.1;
    eb.mean = 1.9;
    ea.replicateMeans.assign(8, 2.1);
    eb.replicateMeans.assign(8, 1.9);
    auto e = CompareZones(ea, eb, Jnd{0.05, true});
    ASSERT_TRUE(e);
    EXPECT_NEAR(e->differenceJnd, 0.2 / (0.05 * 2.0), 1e-12);  // 2 JNDs
    EXPECT_NEAR(e->ci95Jnd, 0.0, 1e-12);
}

}  // namespace
}  // namespace hallwright
