// The envelope integrator's fast paths (shared sorted impulses, swept decay curve, vector
// MTF sums, FitTail on a built integrator) against brute-force sums and closed forms.
#include "metrics/envelope_integrator.h"

#include <cmath>
#include <complex>
#include <optional>
#include <random>
#include <vector>

#include <gtest/gtest.h>

#include "hallwright/metrics.h"
#include "hallwright/sti.h"

namespace {

using hallwright::metrics_detail::EnvelopeIntegrator;
using hallwright::metrics_detail::SortedImpulses;

/* Bins of 1 ms from 0, a few impulses (two at the same time), onset inside bin 3. */
hw::EnergyEnvelope RandomEnvelope(int bins, unsigned seed) {
    std::mt19937 rng(seed);
    std::uniform_real_distribution<double> u(0.0, 1.0);
    hw::EnergyEnvelope env;
    env.binStartS = 0;
    env.binWidthS = 0.001;
    env.earliestS = 0.0034;
    for (int k = 0; k < bins; ++k) env.bins.push_back(k < 3 ? 0.0 : u(rng) * std::exp(-k * 0.004));
    for (int i = 0; i < 40; ++i) env.impulses.push_back({0.0034 + u(rng) * 0.2, u(rng)});
    env.impulses.push_back({0.05, 0.3});
    env.impulses.push_back({0.05, 0.7});
    return env;
}

/* Energy after t by direct summation (bins spread uniformly over their effective span). */
double BruteEnergyAfter(const hw::EnergyEnvelope& env, double t) {
    double e = 0;
    for (size_t k = 0; k < env.bins.size(); ++k) {
        const double a = std::max(env.binStartS + k * env.binWidthS, env.earliestS);
        const double b = env.binStartS + (k + 1) * env.binWidthS;
        if (t <= a) e += env.bins[k];
        else if (t < b) e += env.bins[k] * (b - t) / (b - a);
    }
    for (const hw::TimedEnergy& p : env.impulses)
        if (p.timeS >= t) e += p.energy;
    if (env.tailRate > 0 && env.tailDecay > 0)
        e += env.tailRate / env.tailDecay * std::exp(-env.tailDecay * std::max(0.0, t - env.tailStartS));
    return e;
}

}  // namespace

TEST(EnvelopeIntegrator, SweptAndSearchedEnergyAfterAgreeWithDirectSum) {
    hw::EnergyEnvelope env = RandomEnvelope(600, 7);
    env.tailStartS = 0.6;
    env.tailRate = 0.01;
    env.tailDecay = 7.0;
    const EnvelopeIntegrator in(env);
    const SortedImpulses& imp = in.Impulses();
    size_t cursor = 0;
    for (int j = 0; j <= 1500; ++j) {
        const double t = 0.0005 * j;
        while (cursor < imp.times.size() && imp.times[cursor] < t) ++cursor;
        // The sweep is the search with a cursor: the same operations, so the same bits.
        ASSERT_EQ(in.EnergyAfterFrom(t, cursor), in.EnergyAfter(t)) << t;
        // Against the direct sum (rounding only: prefix sums of ~600 terms).
        const double brute = BruteEnergyAfter(env, t);
        ASSERT_NEAR(in.EnergyAfter(t), brute, 1e-12 * in.Total()) << t;
    }
}

TEST(EnvelopeIntegrator, SharedImpulsesGiveTheSameIntegrals) {
    const hw::EnergyEnvelope env = RandomEnvelope(300, 11);
    hw::EnergyEnvelope binsOnly = env;
    binsOnly.impulses.clear();
    SortedImpulses shared;
    shared.Assign(env.impulses);
    EnvelopeIntegrator own(env), borrowed;
    borrowed.Build(binsOnly, shared);
    EXPECT_EQ(own.Total(), borrowed.Total());
    EXPECT_EQ(own.TotalMoment(), borrowed.TotalMoment());
    for (double t : {0.0, 0.0034, 0.01, 0.05, 0.0500001, 0.12345, 0.3, 1.0}) {
        EXPECT_EQ(own.EnergyBefore(t), borrowed.EnergyBefore(t)) << t;
        EXPECT_EQ(own.MomentBefore(t), borrowed.MomentBefore(t)) << t;
        EXPECT_EQ(own.EnergyAfter(t), borrowed.EnergyAfter(t)) << t;
        EXPECT_EQ(own.EnergyDirect(0.004, t), borrowed.EnergyDirect(0.004, t)) << t;
    }
    // Impulses at equal times keep their order (stable sort): the running sums add 0.3 first.
    const size_t at = shared.Before(0.05);
    ASSERT_LT(at + 1, shared.times.size());
    EXPECT_EQ(shared.energies[at], 0.3);
    EXPECT_EQ(shared.energies[at + 1], 0.7);
    // Rebuilding over other bins reuses the storage and forgets the old bins.
    hw::EnergyEnvelope other = binsOnly;
    for (double& b : other.bins) b *= 2.0;
    borrowed.Build(other, shared);
    EXPECT_NEAR(borrowed.Total(), own.Total() + (own.Total() - shared.prefix.back()), 1e-12 * own.Total());
}

TEST(EnvelopeIntegrator, FourierManyMatchesScalarRecurrenceAndBinIntegrals) {
    // 2500 bins: the rotations are renormalised twice on the way.
    hw::EnergyEnvelope env = RandomEnvelope(2500, 3);
    env.bins[3] = 0;  // the transform reads every bin over its full width (no onset bin)
    const EnvelopeIntegrator in(env);
    for (int count : {hw::kModulationCount, 5, 32}) {
        std::vector<double> omega(count);
        for (int f = 0; f < count; ++f) omega[f] = 2.0 * M_PI * (0.63 + 0.71 * f);
        std::vector<std::complex<double>> got(count);
        in.FourierMany(omega.data(), count, got.data());
        for (int f = 0; f < count; ++f) {
            // The documented recurrence, one frequency at a time: the vector path must give
            // the same bits (same operations per frequency).
            const double w = env.binWidthS;
            double pr = std::cos(-omega[f] * (env.binStartS + 0.5 * w)), pi = std::sin(-omega[f] * (env.binStartS + 0.5 * w));
            const double sr = std::cos(-omega[f] * w), si = std::sin(-omega[f] * w);
            double ar = 0, ai = 0;
            for (size_t k = 0; k < env.bins.size(); ++k) {
                ar += env.bins[k] * pr;
                ai += env.bins[k] * pi;
                const double r = pr * sr - pi * si;
                pi = pr * si + pi * sr;
                pr = r;
                if ((k & 1023) == 1023) {
                    const double m = std::hypot(pr, pi);
                    pr /= m;
                    pi /= m;
                }
            }
            const double half = 0.5 * omega[f] * w;
            std::complex<double> expect = std::sin(half) / half * std::complex<double>(ar, ai);
            for (size_t i = 0; i < in.Impulses().times.size(); ++i)
                expect += in.Impulses().energies[i] * std::polar(1.0, -omega[f] * in.Impulses().times[i]);
            EXPECT_EQ(got[f], expect) << "count " << count << " f " << f;
            // Closed form: a bin of energy E spread uniformly over [a, b) transforms to
            // E (e^{-jwa} - e^{-jwb}) / (j w (b - a)); impulses to E e^{-jwt}.
            std::complex<double> exact = 0;
            const std::complex<double> j(0, 1);
            for (size_t k = 0; k < env.bins.size(); ++k) {
                const double a = k * w, b = (k + 1) * w;
                exact += env.bins[k] * (std::exp(-j * omega[f] * a) - std::exp(-j * omega[f] * b)) / (j * omega[f] * w);
            }
            for (const hw::TimedEnergy& p : env.impulses) exact += p.energy * std::exp(-j * omega[f] * p.timeS);
            // Rounding of the 2500-step rotation (about 1e-13 per step, relative).
            EXPECT_LT(std::abs(got[f] - exact), 1e-9 * in.Total()) << "count " << count << " f " << f;
        }
    }
}

TEST(EnvelopeIntegrator, FitTailOnABuiltIntegratorMatchesFitTailAndTheDecayRate) {
    // A pure exponential e(t) = e^{-k t} (k = 13.8 / 2 s: T = 2 s, Sabine's 60 dB definition)
    // in 1 ms bins up to 1.5 s; its level falls by 10 lg(e) k dB/s (analytic).
    const double k = 6.0 * std::log(10.0) / 2.0;
    hw::EnergyEnvelope env;
    env.earliestS = 0;
    for (int i = 0; i < 1500; ++i) env.bins.push_back((std::exp(-k * i * 0.001) - std::exp(-k * (i + 1) * 0.001)) / k);
    hw::EnergyEnvelope viaPublic = env;
    ASSERT_TRUE(hw::FitTail(viaPublic, 0.0, 1.5));
    EnvelopeIntegrator in(env);
    ASSERT_TRUE(hallwright::metrics_detail::FitTailWith(env, in, 0.0, 1.5));
    EXPECT_EQ(env.tailRate, viaPublic.tailRate);
    EXPECT_EQ(env.tailDecay, viaPublic.tailDecay);
    EXPECT_EQ(env.tailStartS, 1.5);
    // 10 ms interval averages of an exponential lie on the same exponential, scaled by
    // sinh(x) / x with x = k w / 2 (the mean of e^{-kt} over an interval of width w).
    const double x = k * 0.010 / 2.0;
    EXPECT_NEAR(env.tailDecay, k, 1e-9 * k);
    EXPECT_NEAR(env.tailRate, std::exp(-k * 1.5) * std::sinh(x) / x, 1e-9 * std::exp(-k * 1.5));
    // The integrator's totals include the tail it just fitted: the whole exponential's 1/k.
    const EnvelopeIntegrator fresh(env);
    EXPECT_EQ(in.Total(), fresh.Total());
    EXPECT_NEAR(in.Total(), 1.0 / k, 1e-6 / k);
    // A record ending in silence gets no tail, and the totals drop it again.
    env.bins.resize(2000, 0.0);
    in.Build(env);
    EXPECT_FALSE(hallwright::metrics_detail::FitTailWith(env, in, 0.0, 2.0));
    EXPECT_EQ(env.tailRate, 0.0);
    EXPECT_NEAR(in.Total(), (1.0 - std::exp(-k * 1.5)) / k, 1e-12);
}

TEST(EnvelopeIntegrator, DecayFitsOnOneCurveMatchIndependentLeastSquares) {
    // Double-slope decay (T = 0.8 s early, 2.2 s late), 1 ms bins with a direct impulse. Each
    // ISO 3382-1 range is fitted here independently: Schroeder's backward integral by direct
    // summation on the 0.5 ms grid, least squares over [hi, lo] dB; the core's shared curve
    // must give the same decay times.
    const double k1 = 6.0 * std::log(10.0) / 0.8, k2 = 6.0 * std::log(10.0) / 2.2;
    hw::EnergyEnvelope env;
    env.earliestS = 0.01;
    const int bins = 4000;
    for (int i = 0; i < bins; ++i) {
        const double t = (i + 0.5) * 0.001;
        env.bins.push_back(t < 0.01 ? 0.0 : 0.001 * (std::exp(-k1 * (t - 0.01)) + 0.02 * std::exp(-k2 * (t - 0.01))));
    }
    env.impulses.push_back({0.01, 0.02});
    hw::BandInput bi;
    bi.omni = &env;
    bi.timeZeroS = 0.01;
    bi.endS = bins * 0.001;
    bi.gridS = 0.0005;
    const hw::BandParameters p = hw::ComputeBandParameters(bi);
    struct Range {
        double hi, lo;
        std::optional<double> got;
    };
    for (const Range& r : {Range{0, -10, p.edt}, Range{-5, -25, p.t20}, Range{-5, -35, p.t30}}) {
        ASSERT_TRUE(r.got) << r.lo;
        const double e0 = BruteEnergyAfter(env, 0.01);
        double n = 0, sx = 0, sy = 0, sxx = 0, sxy = 0;
        for (int j = 0;; ++j) {
            const double t = 0.01 + j * 0.0005;
            const double level = 10.0 * std::log10(BruteEnergyAfter(env, t) / e0);
            if (level > r.hi + 1e-9) continue;
            if (level < r.lo - 1e-9) break;
            const double x = t - 0.01;
            n += 1, sx += x, sy += level, sxx += x * x, sxy += x * level;
        }
        const double slope = (sxy - sx * sy / n) / (sxx - sx * sx / n);
        EXPECT_NEAR(*r.got, -60.0 / slope, 1e-9 * *r.got) << r.lo;
    }
    // Early and late slopes differ: the ranges really read different parts of the curve.
    EXPECT_LT(*p.edt, *p.t20);
    EXPECT_LT(*p.t20, *p.t30);
}
