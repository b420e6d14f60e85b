// Band-energy core: Schroeder decay curves, decay-time fits, energy ratios, lateral
// fractions and modulation transfer functions from an EnergyEnvelope (metrics.h).
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <limits>

#include "hallwright/diagnostics.h"
#include "hallwright/metrics.h"
#include "hallwright/sti.h"
#include "metrics/envelope_integrator.h"

namespace hallwright {

namespace metrics_detail {

void SortedImpulses::Assign(const std::vector<TimedEnergy>& impulses) {
    std::vector<TimedEnergy> sorted = impulses;
    std::stable_sort(sorted.begin(), sorted.end(),
                     [](const TimedEnergy& a, const TimedEnergy& b) { return a.timeS < b.timeS; });
    const size_t n = sorted.size();
    times.resize(n);
    energies.resize(n);
    prefix.assign(n + 1, 0.0);
    momentPrefix.assign(n + 1, 0.0);
    for (size_t i = 0; i < n; ++i) {
        times[i] = sorted[i].timeS;
        energies[i] = sorted[i].energy;
        prefix[i + 1] = prefix[i] + sorted[i].energy;
        momentPrefix[i + 1] = momentPrefix[i] + sorted[i].energy * sorted[i].timeS;
    }
}

size_t SortedImpulses::Before(double t) const {
    return static_cast<size_t>(std::lower_bound(times.begin(), times.end(), t) - times.begin());
}

void EnvelopeIntegrator::Build(const EnergyEnvelope& env) {
    ownImpulses_.Assign(env.impulses);
    env_ = &env;
    imp_ = &ownImpulses_;
    BuildBins();
}

void EnvelopeIntegrator::Build(const EnergyEnvelope& env, const SortedImpulses& impulses) {
    env_ = &env;
    imp_ = &impulses;
    BuildBins();
}

void EnvelopeIntegrator::BuildBins() {
    const EnergyEnvelope& env = *env_;
    const size_t n = env.bins.size();
    binPrefix_.resize(n + 1);
    binMomentPrefix_.resize(n + 1);
    binSuffix_.resize(n + 1);
    binPrefix_[0] = 0.0;
    binMomentPrefix_[0] = 0.0;
    // Prefix sums with each bin's energy at the middle of its (effective) span, and the
    // suffix sums, in one loop (three independent running sums instead of three passes).
    const double start = env.binStartS, w = env.binWidthS, earliest = env.earliestS;
    const double* bins = env.bins.data();
    double prefix = 0, moment = 0, suffix = 0;
    binSuffix_[n] = 0.0;
    for (size_t k = 0; k < n; ++k) {
        const double effectiveStart = std::max(start + k * w, earliest);
        const double mid = 0.5 * (effectiveStart + start + (k + 1) * w);
        prefix += bins[k];
        moment += bins[k] * mid;
        binPrefix_[k + 1] = prefix;
        binMomentPrefix_[k + 1] = moment;
        const size_t back = n - 1 - k;
        suffix += bins[back];
        binSuffix_[back] = suffix;
    }
    RefreshTotals();
}

void EnvelopeIntegrator::RefreshTotals() {
    const size_t n = env_->bins.size();
    total_ = binPrefix_[n] + imp_->prefix.back() + TailEnergyBefore(1e300);
    totalMoment_ = binMomentPrefix_[n] + imp_->momentPrefix.back() + TailMomentBefore(1e300);
}

inline double EnvelopeIntegrator::EffectiveBinStart(size_t k) const {
    return std::max(env_->binStartS + k * env_->binWidthS, env_->earliestS);
}

inline double EnvelopeIntegrator::BinFraction(size_t k, double t) const {
    const double a = EffectiveBinStart(k), b = env_->binStartS + (k + 1) * env_->binWidthS;
    if (!(b > a)) return t >= b ? 1.0 : 0.0;
    return std::clamp((t - a) / (b - a), 0.0, 1.0);
}

double EnvelopeIntegrator::TailEnergyBefore(double t) const {
    if (env_->tailRate <= 0 || env_->tailDecay <= 0 || t <= env_->tailStartS) return 0;
    const double k = env_->tailDecay, x = t - env_->tailStartS;
    return env_->tailRate * (-std::expm1(-k * x)) / k;
}

double EnvelopeIntegrator::TailMomentBefore(double t) const {
    if (env_->tailRate <= 0 || env_->tailDecay <= 0 || t <= env_->tailStartS) return 0;
    const double k = env_->tailDecay, x = t - env_->tailStartS, ts = env_->tailStartS;
    const double ex = std::exp(-k * x);
    const double a = ts * (1 - ex) / k;
    const double b = (x > 1e200) ? 1.0 / (k * k) : (1 - ex * (1 + k * x)) / (k * k);
    return env_->tailRate * (a + b);
}

double EnvelopeIntegrator::EnergyBefore(double t) const {
    double e = 0;
    // Bins: whole bins plus the fraction of the bin the limit falls in.
    const size_t n = env_->bins.size();
    if (n > 0 && t > env_->binStartS) {
        const double pos = (t - env_->binStartS) / env_->binWidthS;
        if (pos >= static_cast<double>(n)) {
            e += binPrefix_[n];
        } else {
            const size_t k = static_cast<size_t>(pos);
            e += binPrefix_[k] + BinFraction(k, t) * env_->bins[k];
        }
    }
    // Impulses strictly before t.
    e += imp_->prefix[imp_->Before(t)];
    return e + TailEnergyBefore(t);
}

double EnvelopeIntegrator::MomentBefore(double t) const {
    double m = 0;
    const size_t n = env_->bins.size();
    if (n > 0 && t > env_->binStartS) {
        const double pos = (t - env_->binStartS) / env_->binWidthS;
        if (pos >= static_cast<double>(n)) {
            m += binMomentPrefix_[n];
        } else {
            const size_t k = static_cast<size_t>(pos);
            const double a = EffectiveBinStart(k);
            const double frac = BinFraction(k, t);
            m += binMomentPrefix_[k] + frac * env_->bins[k] * (a + 0.5 * std::max(0.0, t - a));
        }
    }
    m += imp_->momentPrefix[imp_->Before(t)];
    return m + TailMomentBefore(t);
}

double EnvelopeIntegrator::EnergyDirect(double a, double b) const {
    double e = 0;
    const size_t n = env_->bins.size();
    if (n > 0 && b > a) {
        const double w = env_->binWidthS;
        const double pa = std::max(0.0, (a - env_->binStartS) / w), pb = (b - env_->binStartS) / w;
        const size_t ka = static_cast<size_t>(pa);
        for (size_t k = ka; k < n && static_cast<double>(k) < pb; ++k) {
            const double lo = std::max(BinFraction(k, a), 0.0), hi = BinFraction(k, b);
            if (hi > lo) e += (hi - lo) * env_->bins[k];
        }
    }
    // Impulses in [a, b), summed one by one (sorted: only those inside are visited).
    const size_t count = imp_->times.size();
    for (size_t i = imp_->Before(a); i < count && imp_->times[i] < b; ++i) e += imp_->energies[i];
    return e + (TailEnergyBefore(b) - TailEnergyBefore(a));
}

double EnvelopeIntegrator::EnergyAfterFrom(double t, size_t imp) const {
    // Summed from the parts after t (not Total - Before) to keep deep decays accurate.
    double e = 0;
    const size_t n = env_->bins.size();
    if (n > 0) {
        const double pos = (t - env_->binStartS) / env_->binWidthS;
        if (pos <= 0) {
            e += binSuffix_[0];
        } else if (pos < static_cast<double>(n)) {
            const size_t k = static_cast<size_t>(pos);
            e += binSuffix_[k + 1] + (1.0 - BinFraction(k, t)) * env_->bins[k];
        }
    }
    e += imp_->prefix.back() - imp_->prefix[imp];
    if (env_->tailRate > 0 && env_->tailDecay > 0) {
        const double k = env_->tailDecay;
        const double from = std::max(t, env_->tailStartS);
        e += env_->tailRate * std::exp(-k * (from - env_->tailStartS)) / k;
    }
    return e;
}

std::complex<double> EnvelopeIntegrator::Fourier(double omega) const {
    using C = std::complex<double>;
    const EnergyEnvelope& env = *env_;
    C sum = 0;
    // Bins: a uniform bin of width w integrates to E sinc(w w/2) e^{-j w mid}; the phase
    // advances by a fixed rotation per bin.
    const size_t n = env.bins.size();
    if (n > 0) {
        const double w = env.binWidthS, half = 0.5 * omega * w;
        const double sinc = half == 0 ? 1.0 : std::sin(half) / half;
        const C step = std::polar(1.0, -omega * w);
        C phase = std::polar(1.0, -omega * (env.binStartS + 0.5 * w));
        C acc = 0;
        for (size_t k = 0; k < n; ++k) {
            acc += env.bins[k] * phase;
            phase *= step;
            if ((k & 1023) == 1023) phase /= std::abs(phase);  // keep the rotation unit length
        }
        sum += sinc * acc;
    }
    for (size_t i = 0; i < imp_->times.size(); ++i)
        sum += imp_->energies[i] * std::polar(1.0, -omega * imp_->times[i]);
    if (env.tailRate > 0 && env.tailDecay > 0)
        sum += env.tailRate * std::polar(1.0, -omega * env.tailStartS) / C(env.tailDecay, omega);
    return sum;
}

namespace {

/* The bins' sums of FourierMany: ar + j ai = sum_k e_k (pr + j pi) (sr + j si)^k, the
   rotations renormalised every 1024 bins. kCount > 0 fixes the number of frequencies at
   compile time (the loops unroll); 0 reads it from `count`. */
template <int kCount>
[[gnu::always_inline]] inline void RotateSumT(const double* bins, size_t n, int count, double* pr0, double* pi0,
                                              const double* sr0, const double* si0, double* ar0, double* ai0) {
    constexpr int kMax = 32;
    const int fs = kCount > 0 ? kCount : count;
    // Local copies: the compiler knows they alias nothing, so it keeps them in vectors.
    double pr[kMax], pi[kMax], sr[kMax], si[kMax], ar[kMax], ai[kMax];
    for (int f = 0; f < fs; ++f)
        pr[f] = pr0[f], pi[f] = pi0[f], sr[f] = sr0[f], si[f] = si0[f], ar[f] = ar0[f], ai[f] = ai0[f];
    for (size_t k = 0; k < n; ++k) {
        const double e = bins[k];
        for (int f = 0; f < fs; ++f) {
            ar[f] += e * pr[f];
            ai[f] += e * pi[f];
            const double r = pr[f] * sr[f] - pi[f] * si[f];
            pi[f] = pr[f] * si[f] + pi[f] * sr[f];
            pr[f] = r;
        }
        if ((k & 1023) == 1023)
            for (int f = 0; f < fs; ++f) {  // keep the rotations unit length
                const double m = std::hypot(pr[f], pi[f]);
                pr[f] /= m;
                pi[f] /= m;
            }
    }
    for (int f = 0; f < fs; ++f) pr0[f] = pr[f], pi0[f] = pi[f], ar0[f] = ar[f], ai0[f] = ai[f];
}

// The same sums on 256-bit vectors where the processor has them, eight frequencies at a
// time (two vectors each for the rotation, step and sums stay in registers): the same
// multiplications and additions in the same order per frequency (no fused multiply-add), so
// the same bits as RotateSumT.
#if defined(__x86_64__) && (defined(__GNUC__) || defined(__clang__))
#define HALLWRIGHT_ROTATE_AVX2 1
typedef double V4 __attribute__((vector_size(32)));
__attribute__((target("avx2"))) void RotateSumAvx2(const double* bins, size_t n, int count, double* pr0,
                                                    double* pi0, const double* sr0, const double* si0,
                                                    double* ar0, double* ai0) {
    for (int g = 0; g < count; g += 8) {
        // Lanes past `count` rotate by 1 (pr = 1, pi = 0) and are dropped.
        alignas(32) double pr[8], pi[8], sr[8], si[8], ar[8], ai[8];
        for (int l = 0; l < 8; ++l) {
            const int f = g + l;
            const bool used = f < count;
            pr[l] = used ? pr0[f] : 1.0, pi[l] = used ? pi0[f] : 0.0;
            sr[l] = used ? sr0[f] : 1.0, si[l] = used ? si0[f] : 0.0;
            ar[l] = used ? ar0[f] : 0.0, ai[l] = used ? ai0[f] : 0.0;
        }
        V4 pa, pb, qa, qb, sra, srb, sia, sib, aa, ab, ba, bb;
        __builtin_memcpy(&pa, pr, 32), __builtin_memcpy(&pb, pr + 4, 32);
        __builtin_memcpy(&qa, pi, 32), __builtin_memcpy(&qb, pi + 4, 32);
        __builtin_memcpy(&sra, sr, 32), __builtin_memcpy(&srb, sr + 4, 32);
        __builtin_memcpy(&sia, si, 32), __builtin_memcpy(&sib, si + 4, 32);
        __builtin_memcpy(&aa, ar, 32), __builtin_memcpy(&ab, ar + 4, 32);
        __builtin_memcpy(&ba, ai, 32), __builtin_memcpy(&bb, ai + 4, 32);
        for (size_t k = 0; k < n; ++k) {
            const V4 e = {bins[k], bins[k], bins[k], bins[k]};
            aa += e * pa, ab += e * pb;
            ba += e * qa, bb += e * qb;
            const V4 ra = pa * sra - qa * sia, rb = pb * srb - qb * sib;
            qa = pa * sia + qa * sra, qb = pb * sib + qb * srb;
            pa = ra, pb = rb;
            if ((k & 1023) == 1023) {  // keep the rotations unit length
                __builtin_memcpy(pr, &pa, 32), __builtin_memcpy(pr + 4, &pb, 32);
                __builtin_memcpy(pi, &qa, 32), __builtin_memcpy(pi + 4, &qb, 32);
                for (int l = 0; l < 8; ++l) {
                    const double m = std::hypot(pr[l], pi[l]);
                    pr[l] /= m;
                    pi[l] /= m;
                }
                __builtin_memcpy(&pa, pr, 32), __builtin_memcpy(&pb, pr + 4, 32);
                __builtin_memcpy(&qa, pi, 32), __builtin_memcpy(&qb, pi + 4, 32);
            }
        }
        __builtin_memcpy(pr, &pa, 32), __builtin_memcpy(pr + 4, &pb, 32);
        __builtin_memcpy(pi, &qa, 32), __builtin_memcpy(pi + 4, &qb, 32);
        __builtin_memcpy(ar, &aa, 32), __builtin_memcpy(ar + 4, &ab, 32);
        __builtin_memcpy(ai, &ba, 32), __builtin_memcpy(ai + 4, &bb, 32);
        for (int l = 0; l < 8 && g + l < count; ++l)
            pr0[g + l] = pr[l], pi0[g + l] = pi[l], ar0[g + l] = ar[l], ai0[g + l] = ai[l];
    }
}
const bool kHaveAvx2 = [] {
    __builtin_cpu_init();
    return __builtin_cpu_supports("avx2") != 0;
}();
#endif

void RotateSum(const double* bins, size_t n, int count, double* pr, double* pi, const double* sr,
               const double* si, double* ar, double* ai) {
#ifdef HALLWRIGHT_ROTATE_AVX2
    if (kHaveAvx2) return RotateSumAvx2(bins, n, count, pr, pi, sr, si, ar, ai);
#endif
    if (count == kModulationCount) return RotateSumT<kModulationCount>(bins, n, count, pr, pi, sr, si, ar, ai);
    RotateSumT<0>(bins, n, count, pr, pi, sr, si, ar, ai);
}

}  // namespace

void EnvelopeIntegrator::FourierMany(const double* omega, int count, std::complex<double>* out) const {
    constexpr int kMax = 32;
    HW_CHECK(count <= kMax, "FourierMany takes at most 32 frequencies");
    const EnergyEnvelope& env = *env_;
    // Same sums as Fourier(), all frequencies advanced together: re/im in flat arrays.
    double pr[kMax], pi[kMax], sr[kMax], si[kMax], ar[kMax] = {}, ai[kMax] = {};
    const size_t n = env.bins.size();
    const double w = env.binWidthS;
    for (int f = 0; f < count; ++f) {
        const double first = -omega[f] * (env.binStartS + 0.5 * w), step = -omega[f] * w;
        pr[f] = std::cos(first);
        pi[f] = std::sin(first);
        sr[f] = std::cos(step);
        si[f] = std::sin(step);
    }
    RotateSum(env.bins.data(), n, count, pr, pi, sr, si, ar, ai);
    using C = std::complex<double>;
    const size_t impulses = imp_->times.size();
    for (int f = 0; f < count; ++f) {
        const double half = 0.5 * omega[f] * w;
        const double sinc = half == 0 ? 1.0 : std::sin(half) / half;
        C sum = n > 0 ? sinc * C(ar[f], ai[f]) : C(0);
        for (size_t i = 0; i < impulses; ++i)
            sum += imp_->energies[i] * std::polar(1.0, -omega[f] * imp_->times[i]);
        if (env.tailRate > 0 && env.tailDecay > 0)
            sum += env.tailRate * std::polar(1.0, -omega[f] * env.tailStartS) / C(env.tailDecay, omega[f]);
        out[f] = sum;
    }
}

}  // namespace metrics_detail

using metrics_detail::EnvelopeIntegrator;
using metrics_detail::FitResult;
using metrics_detail::SortedImpulses;

namespace {

constexpr double kTenOverLn10 = 4.342944819032518;  // 10 lg(e)

std::string Fmt(const char* fmt, double v) {
    char buf[64];
    std::snprintf(buf, sizeof buf, fmt, v);
    return buf;
}

/* One ISO 3382-1/-2 evaluation range of the decay curve: a least-squares line on L(t) over
   [hiDb, loDb]. */
struct DecayRange {
    double hiDb, loDb;
    const char* name;
};

/* Fits the ranges on one decay curve. The curve L(t) = 10 lg(E(t) / E(t0)) is evaluated
   once on the grid t0 + j gridS, down to the deepest range that is fitted, and shared by the
   fits (each reads the same points as if it evaluated them itself). */
template <int kRanges>
void FitDecays(const EnvelopeIntegrator& in, double t0, double endS, double gridS, double decayEndDb,
               const DecayRange (&ranges)[kRanges], FitResult (&out)[kRanges]) {
    bool fit[kRanges];
    double deepestDb = std::numeric_limits<double>::infinity();
    for (int i = 0; i < kRanges; ++i) {
        const double need = ranges[i].loDb - 10.0;
        fit[i] = decayEndDb <= need;
        if (!fit[i]) {
            out[i].note = std::string(ranges[i].name) + " needs the decay curve to reach " +
                          Fmt("%.0f", need) +
                          " dB before the record ends (10 dB below the bottom of its range); it ends at " +
                          (std::isfinite(decayEndDb) ? Fmt("%.1f", decayEndDb) + " dB" : "?");
        } else {
            deepestDb = std::min(deepestDb, ranges[i].loDb);
        }
    }
    if (!std::isfinite(deepestDb)) return;
    const double e0 = in.EnergyAfter(t0);
    if (!(e0 > 0)) {
        for (int i = 0; i < kRanges; ++i)
            if (fit[i]) out[i].note = "no energy after time zero";
        return;
    }
    // The decay curve's levels, swept forward (impulse cursor instead of a search per point);
    // it stops where the energy ends or below the deepest range.
    thread_local std::vector<double> levels;
    levels.clear();
    const SortedImpulses& imp = in.Impulses();
    const size_t impCount = imp.times.size();
    const long points = static_cast<long>(std::floor((endS - t0) / gridS + 1e-9));
    size_t cursor = 0;
    double previous = -std::numeric_limits<double>::infinity();
    for (long j = 0; j <= points; ++j) {
        const double t = t0 + j * gridS;
        if (t < previous) cursor = 0;  // not increasing (no grid): search again
        previous = t;
        while (cursor < impCount && imp.times[cursor] < t) ++cursor;
        const double e = in.EnergyAfterFrom(t, cursor);
        if (!(e > 0)) break;
        const double level = 10.0 * std::log10(e / e0);
        levels.push_back(level);
        if (level < deepestDb - 1e-9) break;
    }
    for (int i = 0; i < kRanges; ++i) {
        if (!fit[i]) continue;
        const double hiDb = ranges[i].hiDb, loDb = ranges[i].loDb;
        // Running sums over the decay-curve points inside the range.
        double n = 0, sx = 0, sy = 0, sxx = 0, sxy = 0, syy = 0;
        for (size_t j = 0; j < levels.size(); ++j) {
            const double level = levels[j];
            if (level > hiDb + 1e-9) continue;
            if (level < loDb - 1e-9) break;
            const double t = t0 + static_cast<long>(j) * gridS;
            const double x = t - t0;
            n += 1;
            sx += x, sy += level, sxx += x * x, sxy += x * level, syy += level * level;
        }
        if (n < 3) {
            out[i].note = std::string(ranges[i].name) +
                          ": fewer than 3 decay-curve points in its range (decay too fast "
                          "for the time resolution)";
            continue;
        }
        const double vx = sxx - sx * sx / n, vy = syy - sy * sy / n, cxy = sxy - sx * sy / n;
        const double slope = cxy / vx;
        if (!(slope < 0)) {
            out[i].note = std::string(ranges[i].name) + ": the decay curve does not fall over its range";
            continue;
        }
        out[i].t = -60.0 / slope;
        out[i].r = (vy > 0) ? std::fabs(cxy / std::sqrt(vx * vy)) : 1.0;
    }
}

}  // namespace

namespace metrics_detail {

bool FitTailWith(EnergyEnvelope& env, EnvelopeIntegrator& in, double t0, double endS) {
    env.tailRate = 0;
    env.tailDecay = 0;
    in.RefreshTotals();
    const double span = endS - t0;
    if (!(span > 0)) return false;
    const double w = std::max(env.binWidthS, std::min(0.010, span / 20.0));
    const int count = static_cast<int>(std::floor(span / w));
    if (count < 3) return false;
    // Interval levels (energy per second), counted back from the end of the record, read
    // only as far back as the fit uses them (the last 20 dB above the end level).
    auto levelAt = [&](int j) {
        const double b = endS - j * w, a = b - w;
        const double e = in.EnergyDirect(a, b) / w;
        return e > 0 ? 10.0 * std::log10(e) : -std::numeric_limits<double>::infinity();
    };
    // A record that ends in silence needs no tail (decay ended inside the record).
    const double endLevel = levelAt(0);
    if (!std::isfinite(endLevel)) return false;
    double n = 0, sx = 0, sy = 0, sxx = 0, sxy = 0;
    for (int j = 0; j < count; ++j) {
        const double level = j == 0 ? endLevel : levelAt(j);
        if (!std::isfinite(level)) continue;
        if (level > endLevel + 20.0) break;
        const double b = endS - j * w, a = b - w;
        const double x = 0.5 * (a + b) - endS;
        n += 1, sx += x, sy += level, sxx += x * x, sxy += x * level;
    }
    if (n < 3) return false;
    const double slope = (sxy - sx * sy / n) / (sxx - sx * sx / n);
    if (!(slope < 0)) return false;
    const double intercept = (sy - slope * sx) / n;  // level at endS
    env.tailStartS = endS;
    env.tailRate = std::pow(10.0, intercept / 10.0);
    env.tailDecay = -slope / kTenOverLn10;
    in.RefreshTotals();
    return true;
}

BandParameters ComputeBandParametersWith(const BandInput& bi, const EnvelopeIntegrator& in,
                                         const EnvelopeIntegrator& er, const EnvelopeIntegrator* lateralSq,
                                         const EnvelopeIntegrator* lateralAbs) {
    BandParameters out;
    out.recordEndS = bi.endS;
    const double t0 = bi.timeZeroS;
    const double e0 = in.EnergyAfter(t0);
    // G reads the band's own energy (the ratios' envelope when the decay curve has its own).
    out.totalEnergy = er.Total();
    if (!(e0 > 0)) {
        out.edtNote = out.t20Note = out.t30Note = out.energyNote = "no energy after time zero";
        out.lateralNote = out.edtNote;
        return out;
    }
    // Level at the end of the record: the tail energy when compensated, else the last 10 ms.
    const EnergyEnvelope& env = *bi.omni;
    double endEnergy;
    if (env.tailRate > 0 && env.tailDecay > 0) {
        endEnergy = env.tailRate / env.tailDecay;
        out.lateSlopeDbPerS = -env.tailDecay * kTenOverLn10;
    } else {
        endEnergy = in.Energy(std::max(t0, bi.endS - 0.010), bi.endS);
    }
    out.decayEndDb = endEnergy > 0 ? 10.0 * std::log10(endEnergy / e0)
                                   : -std::numeric_limits<double>::infinity();

    // Decay times (ISO 3382-1 evaluation ranges), read off one decay curve.
    static constexpr DecayRange kRanges[3] = {{0.0, -10.0, "EDT"}, {-5.0, -25.0, "T20"}, {-5.0, -35.0, "T30"}};
    FitResult fits[3];
    FitDecays(in, t0, bi.endS, bi.gridS, out.decayEndDb, kRanges, fits);
    out.edt = fits[0].t, out.edtR = fits[0].r, out.edtNote = std::move(fits[0].note);
    out.t20 = fits[1].t, out.t20R = fits[1].r, out.t20Note = std::move(fits[1].note);
    out.t30 = fits[2].t, out.t30R = fits[2].r, out.t30Note = std::move(fits[2].note);

    // Energy ratios and centre time, integrated from t0 over exact times. The limits sit at
    // tl + 50 / 80 ms with tl = t0 + limitOffsetS: an analysis filter delays every arrival by
    // its energy delay, so without the offset a WAV path would count a share of the energy
    // arriving just before t0 + 50 ms as late (and add the delay to Ts) that the ideal band
    // response (the histogram) counts as early (ISO 3382-1 A.2.3-A.2.5 define the limits on
    // the arrival times of the response, not of the filter output).
    const double tl = t0 + bi.limitOffsetS;
    const double er0 = er.EnergyAfter(t0);
    const double e50 = er.Energy(t0, tl + 0.050), e80 = er.Energy(t0, tl + 0.080);
    const double late50 = er.EnergyAfter(tl + 0.050), late80 = er.EnergyAfter(tl + 0.080);
    if (bi.endS < tl + 0.080) {
        out.energyNote = "the record ends before t0 + 80 ms";
    } else {
        if (late50 > 0 && e50 > 0) out.c50 = 10.0 * std::log10(e50 / late50);
        if (late80 > 0 && e80 > 0) out.c80 = 10.0 * std::log10(e80 / late80);
        if (er0 > 0) out.d50 = e50 / er0;
        if (out.decayEndDb <= -20.0 && er0 > 0)
            out.ts = (er.TotalMoment() - er.MomentBefore(t0)) / er0 - tl;
        else
            out.energyNote = "Ts needs the decay curve to reach -20 dB before the record ends";
    }
    if (bi.referenceEnergy > 0)
        out.g = 10.0 * std::log10(out.totalEnergy / bi.referenceEnergy);
    else
        out.gNote = "no reference energy (free field at 10 m) for G";

    // Lateral fractions J_LF, J_LFC over [t0 + 5 ms, t0 + 80 ms) (ISO 3382-1 A.2.2).
    if (!bi.lateralSq || !bi.lateralAbs) {
        out.lateralNote = "no lateral (figure-of-eight) record";
    } else if (tl + 0.005 < bi.lateralValidFromS - 1e-12 || tl + 0.080 > bi.lateralValidToS + 1e-12) {
        out.lateralNote = "the lateral record does not cover t0 + 5 ms ... t0 + 80 ms";
    } else if (e80 > 0) {
        EnvelopeIntegrator ownSq, ownAb;
        if (!lateralSq) ownSq.Build(*bi.lateralSq), lateralSq = &ownSq;
        if (!lateralAbs) ownAb.Build(*bi.lateralAbs), lateralAbs = &ownAb;
        out.lf = lateralSq->Energy(tl + 0.005, tl + 0.080) / e80;
        out.lfc = lateralAbs->Energy(tl + 0.005, tl + 0.080) / e80;
    }

    // Modulation transfer (Schroeder 1981) over the whole response, for STI.
    double omega[kModulationCount];
    std::complex<double> spectrum[kModulationCount];
    for (int f = 0; f < kModulationCount; ++f) omega[f] = 2.0 * M_PI * kModulationHz[f];
    er.FourierMany(omega, kModulationCount, spectrum);
    for (int f = 0; f < kModulationCount; ++f) out.mtf[f] = std::abs(spectrum[f]) / er.Total();
    return out;
}

}  // namespace metrics_detail

bool FitTail(EnergyEnvelope& env, double t0, double endS) {
    env.tailRate = 0;
    env.tailDecay = 0;
    EnvelopeIntegrator in(env);
    return metrics_detail::FitTailWith(env, in, t0, endS);
}

BandParameters ComputeBandParameters(const BandInput& bi) {
    const EnvelopeIntegrator in(*bi.omni);
    if (!bi.ratios) return metrics_detail::ComputeBandParametersWith(bi, in, in, nullptr, nullptr);
    const EnvelopeIntegrator er(*bi.ratios);
    return metrics_detail::ComputeBandParametersWith(bi, in, er, nullptr, nullptr);
}

const ParameterJnd* FindJnd(const std::string& parameter) {
    std::string p = parameter;
    if (p.size() > 2 && p.compare(p.size() - 2, 2, "_M") == 0) p.resize(p.size() - 2);
    for (const ParameterJnd& j : kJndTable)
        if (p == j.parameter) return &j;
    return nullptr;
}

std::optional<double> JndAt(const std::string& parameter, double value) {
    const ParameterJnd* j = FindJnd(parameter);
    if (!j) return std::nullopt;
    return j->relative ? j->value * std::fabs(value) : j->value;
}

const ParameterValue* ParameterTable::Find(const std::string& parameter, int band) const {
    for (const ParameterValue& v : values)
        if (v.parameter == parameter && v.band == band) return &v;
    return nullptr;
}

}  // namespace hallwright
