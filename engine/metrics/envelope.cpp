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

EnvelopeIntegrator::EnvelopeIntegrator(const EnergyEnvelope& env) : env_(env) {
    const size_t n = env.bins.size();
    binPrefix_.assign(n + 1, 0.0);
    binMomentPrefix_.assign(n + 1, 0.0);
    for (size_t k = 0; k < n; ++k) {
        const double mid = 0.5 * (EffectiveBinStart(k) + env.binStartS + (k + 1) * env.binWidthS);
        binPrefix_[k + 1] = binPrefix_[k] + env.bins[k];
        binMomentPrefix_[k + 1] = binMomentPrefix_[k] + env.bins[k] * mid;
    }
    binSuffix_.assign(n + 1, 0.0);
    for (size_t k = n; k-- > 0;) binSuffix_[k] = binSuffix_[k + 1] + env.bins[k];
    impulses_ = env.impulses;
    std::stable_sort(impulses_.begin(), impulses_.end(),
                     [](const TimedEnergy& a, const TimedEnergy& b) { return a.timeS < b.timeS; });
    impPrefix_.assign(impulses_.size() + 1, 0.0);
    impMomentPrefix_.assign(impulses_.size() + 1, 0.0);
    for (size_t i = 0; i < impulses_.size(); ++i) {
        impPrefix_[i + 1] = impPrefix_[i] + impulses_[i].energy;
        impMomentPrefix_[i + 1] = impMomentPrefix_[i] + impulses_[i].energy * impulses_[i].timeS;
    }
    total_ = binPrefix_[n] + impPrefix_.back() + TailEnergyBefore(1e300);
    totalMoment_ = binMomentPrefix_[n] + impMomentPrefix_.back() + TailMomentBefore(1e300);
}

double EnvelopeIntegrator::EffectiveBinStart(size_t k) const {
    return std::max(env_.binStartS + k * env_.binWidthS, env_.earliestS);
}

double EnvelopeIntegrator::BinFraction(size_t k, double t) const {
    const double a = EffectiveBinStart(k), b = env_.binStartS + (k + 1) * env_.binWidthS;
    if (!(b > a)) return t >= b ? 1.0 : 0.0;
    return std::clamp((t - a) / (b - a), 0.0, 1.0);
}

double EnvelopeIntegrator::TailEnergyBefore(double t) const {
    if (env_.tailRate <= 0 || env_.tailDecay <= 0 || t <= env_.tailStartS) return 0;
    const double k = env_.tailDecay, x = t - env_.tailStartS;
    return env_.tailRate * (-std::expm1(-k * x)) / k;
}

double EnvelopeIntegrator::TailMomentBefore(double t) const {
    if (env_.tailRate <= 0 || env_.tailDecay <= 0 || t <= env_.tailStartS) return 0;
    const double k = env_.tailDecay, x = t - env_.tailStartS, ts = env_.tailStartS;
    const double ex = std::exp(-k * x);
    const double a = ts * (1 - ex) / k;
    const double b = (x > 1e200) ? 1.0 / (k * k) : (1 - ex * (1 + k * x)) / (k * k);
    return env_.tailRate * (a + b);
}

double EnvelopeIntegrator::EnergyBefore(double t) const {
    double e = 0;
    // Bins: whole bins plus the fraction of the bin the limit falls in.
    const size_t n = env_.bins.size();
    if (n > 0 && t > env_.binStartS) {
        const double pos = (t - env_.binStartS) / env_.binWidthS;
        if (pos >= static_cast<double>(n)) {
            e += binPrefix_[n];
        } else {
            const size_t k = static_cast<size_t>(pos);
            e += binPrefix_[k] + BinFraction(k, t) * env_.bins[k];
        }
    }
    // Impulses strictly before t.
    auto it = std::lower_bound(impulses_.begin(), impulses_.end(), t,
                               [](const TimedEnergy& a, double v) { return a.timeS < v; });
    e += impPrefix_[it - impulses_.begin()];
    return e + TailEnergyBefore(t);
}

double EnvelopeIntegrator::MomentBefore(double t) const {
    double m = 0;
    const size_t n = env_.bins.size();
    if (n > 0 && t > env_.binStartS) {
        const double pos = (t - env_.binStartS) / env_.binWidthS;
        if (pos >= static_cast<double>(n)) {
            m += binMomentPrefix_[n];
        } else {
            const size_t k = static_cast<size_t>(pos);
            const double a = EffectiveBinStart(k);
            const double frac = BinFraction(k, t);
            m += binMomentPrefix_[k] + frac * env_.bins[k] * (a + 0.5 * std::max(0.0, t - a));
        }
    }
    auto it = std::lower_bound(impulses_.begin(), impulses_.end(), t,
                               [](const TimedEnergy& a, double v) { return a.timeS < v; });
    m += impMomentPrefix_[it - impulses_.begin()];
    return m + TailMomentBefore(t);
}

double EnvelopeIntegrator::EnergyDirect(double a, double b) const {
    double e = 0;
    const size_t n = env_.bins.size();
    if (n > 0 && b > a) {
        const double w = env_.binWidthS;
        const double pa = std::max(0.0, (a - env_.binStartS) / w), pb = (b - env_.binStartS) / w;
        const size_t ka = static_cast<size_t>(pa);
        for (size_t k = ka; k < n && static_cast<double>(k) < pb; ++k) {
            const double lo = std::max(BinFraction(k, a), 0.0), hi = BinFraction(k, b);
            if (hi > lo) e += (hi - lo) * env_.bins[k];
        }
    }
    // Impulses in [a, b), summed one by one (sorted: only those inside are visited).
    auto it = std::lower_bound(impulses_.begin(), impulses_.end(), a,
                               [](const TimedEnergy& p, double v) { return p.timeS < v; });
    for (; it != impulses_.end() && it->timeS < b; ++it) e += it->energy;
    return e + (TailEnergyBefore(b) - TailEnergyBefore(a));
}

double EnvelopeIntegrator::EnergyAfter(double t) const {
    // Summed from the parts after t (not Total - Before) to keep deep decays accurate.
    double e = 0;
    const size_t n = env_.bins.size();
    if (n > 0) {
        const double pos = (t - env_.binStartS) / env_.binWidthS;
        if (pos <= 0) {
            e += binSuffix_[0];
        } else if (pos < static_cast<double>(n)) {
            const size_t k = static_cast<size_t>(pos);
            e += binSuffix_[k + 1] + (1.0 - BinFraction(k, t)) * env_.bins[k];
        }
    }
    auto it = std::lower_bound(impulses_.begin(), impulses_.end(), t,
                               [](const TimedEnergy& a, double v) { return a.timeS < v; });
    e += impPrefix_.back() - impPrefix_[it - impulses_.begin()];
    if (env_.tailRate > 0 && env_.tailDecay > 0) {
        const double k = env_.tailDecay;
        const double from = std::max(t, env_.tailStartS);
        e += env_.tailRate * std::exp(-k * (from - env_.tailStartS)) / k;
    }
    return e;
}

std::complex<double> EnvelopeIntegrator::Fourier(double omega) const {
    using C = std::complex<double>;
    C sum = 0;
    // Bins: a uniform bin of width w integrates to E sinc(w w/2) e^{-j w mid}; the phase
    // advances by a fixed rotation per bin.
    const size_t n = env_.bins.size();
    if (n > 0) {
        const double w = env_.binWidthS, half = 0.5 * omega * w;
        const double sinc = half == 0 ? 1.0 : std::sin(half) / half;
        const C step = std::polar(1.0, -omega * w);
        C phase = std::polar(1.0, -omega * (env_.binStartS + 0.5 * w));
        C acc = 0;
        for (size_t k = 0; k < n; ++k) {
            acc += env_.bins[k] * phase;
            phase *= step;
            if ((k & 1023) == 1023) phase /= std::abs(phase);  // keep the rotation unit length
        }
        sum += sinc * acc;
    }
    for (const TimedEnergy& p : impulses_) sum += p.energy * std::polar(1.0, -omega * p.timeS);
    if (env_.tailRate > 0 && env_.tailDecay > 0)
        sum += env_.tailRate * std::polar(1.0, -omega * env_.tailStartS) / C(env_.tailDecay, omega);
    return sum;
}

void EnvelopeIntegrator::FourierMany(const double* omega, int count, std::complex<double>* out) const {
    constexpr int kMax = 32;
    HW_CHECK(count <= kMax, "FourierMany takes at most 32 frequencies");
    // Same sums as Fourier(), all frequencies advanced together: re/im in flat arrays.
    double pr[kMax], pi[kMax], sr[kMax], si[kMax], ar[kMax] = {}, ai[kMax] = {};
    const size_t n = env_.bins.size();
    const double w = env_.binWidthS;
    for (int f = 0; f < count; ++f) {
        const double first = -omega[f] * (env_.binStartS + 0.5 * w), step = -omega[f] * w;
        pr[f] = std::cos(first);
        pi[f] = std::sin(first);
        sr[f] = std::cos(step);
        si[f] = std::sin(step);
    }
    for (size_t k = 0; k < n; ++k) {
        const double e = env_.bins[k];
        for (int f = 0; f < count; ++f) {
            ar[f] += e * pr[f];
            ai[f] += e * pi[f];
            const double r = pr[f] * sr[f] - pi[f] * si[f];
            pi[f] = pr[f] * si[f] + pi[f] * sr[f];
            pr[f] = r;
        }
        if ((k & 1023) == 1023)
            for (int f = 0; f < count; ++f) {  // keep the rotations unit length
                const double m = std::hypot(pr[f], pi[f]);
                pr[f] /= m;
                pi[f] /= m;
            }
    }
    using C = std::complex<double>;
    for (int f = 0; f < count; ++f) {
        const double half = 0.5 * omega[f] * w;
        const double sinc = half == 0 ? 1.0 : std::sin(half) / half;
        C sum = n > 0 ? sinc * C(ar[f], ai[f]) : C(0);
        for (const TimedEnergy& p : impulses_) sum += p.energy * std::polar(1.0, -omega[f] * p.timeS);
        if (env_.tailRate > 0 && env_.tailDecay > 0)
            sum += env_.tailRate * std::polar(1.0, -omega[f] * env_.tailStartS) / C(env_.tailDecay, omega[f]);
        out[f] = sum;
    }
}

}  // namespace metrics_detail

using metrics_detail::EnvelopeIntegrator;

namespace {

constexpr double kTenOverLn10 = 4.342944819032518;  // 10 lg(e)

struct FitResult {
    std::optional<double> t;
    double r = 0;
    std::string note;
};

std::string Fmt(const char* fmt, double v) {
    char buf[64];
    std::snprintf(buf, sizeof buf, fmt, v);
    return buf;
}

/* Least-squares line on L(t) over [hiDb, loDb] of the decay curve (ISO 3382-1/-2). */
FitResult FitDecay(const EnvelopeIntegrator& in, double t0, double endS, double gridS, double hiDb,
                   double loDb, double decayEndDb, const char* name) {
    FitResult out;
    const double need = loDb - 10.0;
    if (!(decayEndDb <= need)) {
        out.note = std::string(name) + " needs the decay curve to reach " + Fmt("%.0f", need) +
                   " dB before the record ends (10 dB below the bottom of its range); it ends at " +
                   (std::isfinite(decayEndDb) ? Fmt("%.1f", decayEndDb) + " dB" : "?");
        return out;
    }
    const double e0 = in.EnergyAfter(t0);
    if (!(e0 > 0)) {
        out.note = "no energy after time zero";
        return out;
    }
    // Running sums over the decay-curve points inside the range.
    double n = 0, sx = 0, sy = 0, sxx = 0, sxy = 0, syy = 0;
    const long points = static_cast<long>(std::floor((endS - t0) / gridS + 1e-9));
    for (long j = 0; j <= points; ++j) {
        const double t = t0 + j * gridS;
        const double e = in.EnergyAfter(t);
        if (!(e > 0)) break;
        const double level = 10.0 * std::log10(e / e0);
        if (level > hiDb + 1e-9) continue;
        if (level < loDb - 1e-9) break;
        const double x = t - t0;
        n += 1;
        sx += x, sy += level, sxx += x * x, sxy += x * level, syy += level * level;
    }
    if (n < 3) {
        out.note = std::string(name) + ": fewer than 3 decay-curve points in its range (decay too fast "
                   "for the time resolution)";
        return out;
    }
    const double vx = sxx - sx * sx / n, vy = syy - sy * sy / n, cxy = sxy - sx * sy / n;
    const double slope = cxy / vx;
    if (!(slope < 0)) {
        out.note = std::string(name) + ": the decay curve does not fall over its range";
        return out;
    }
    out.t = -60.0 / slope;
    out.r = (vy > 0) ? std::fabs(cxy / std::sqrt(vx * vy)) : 1.0;
    return out;
}

}  // namespace

bool FitTail(EnergyEnvelope& env, double t0, double endS) {
    env.tailRate = 0;
    env.tailDecay = 0;
    EnvelopeIntegrator in(env);
    const double span = endS - t0;
    if (!(span > 0)) return false;
    const double w = std::max(env.binWidthS, std::min(0.010, span / 20.0));
    const int count = static_cast<int>(std::floor(span / w));
    if (count < 3) return false;
    // Interval levels (energy per second), counted back from the end of the record.
    std::vector<double> centre, level;
    for (int i = count - 1; i >= 0; --i) {
        const double b = endS - (count - 1 - i) * w, a = b - w;
        const double e = in.EnergyDirect(a, b) / w;
        centre.push_back(0.5 * (a + b));
        level.push_back(e > 0 ? 10.0 * std::log10(e) : -std::numeric_limits<double>::infinity());
    }
    // Drop trailing silent intervals; a record that ends in silence needs no tail.
    size_t first = 0;
    while (first < level.size() && !std::isfinite(level[first])) ++first;
    if (first == level.size()) return false;
    if (first > 0) return false;  // decay ended inside the record: no compensation needed
    const double endLevel = level[0];
    double n = 0, sx = 0, sy = 0, sxx = 0, sxy = 0;
    for (size_t i = 0; i < level.size(); ++i) {
        if (!std::isfinite(level[i])) continue;
        if (level[i] > endLevel + 20.0) break;
        const double x = centre[i] - endS;
        n += 1, sx += x, sy += level[i], sxx += x * x, sxy += x * level[i];
    }
    if (n < 3) return false;
    const double slope = (sxy - sx * sy / n) / (sxx - sx * sx / n);
    if (!(slope < 0)) return false;
    const double intercept = (sy - slope * sx) / n;  // level at endS
    env.tailStartS = endS;
    env.tailRate = std::pow(10.0, intercept / 10.0);
    env.tailDecay = -slope / kTenOverLn10;
    return true;
}

BandParameters ComputeBandParameters(const BandInput& bi) {
    BandParameters out;
    out.recordEndS = bi.endS;
    const EnvelopeIntegrator in(*bi.omni);
    const double t0 = bi.timeZeroS;
    const double e0 = in.EnergyAfter(t0);
    // G reads the band's own energy (the ratios' envelope when the decay curve has its own).
    out.totalEnergy = bi.ratios ? EnvelopeIntegrator(*bi.ratios).Total() : in.Total();
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

    // Decay times (ISO 3382-1 evaluation ranges).
    FitResult edt = FitDecay(in, t0, bi.endS, bi.gridS, 0.0, -10.0, out.decayEndDb, "EDT");
    FitResult t20 = FitDecay(in, t0, bi.endS, bi.gridS, -5.0, -25.0, out.decayEndDb, "T20");
    FitResult t30 = FitDecay(in, t0, bi.endS, bi.gridS, -5.0, -35.0, out.decayEndDb, "T30");
    out.edt = edt.t, out.edtR = edt.r, out.edtNote = edt.note;
    out.t20 = t20.t, out.t20R = t20.r, out.t20Note = t20.note;
    out.t30 = t30.t, out.t30R = t30.r, out.t30Note = t30.note;

    // Energy ratios and centre time, integrated from t0 over exact times. The limits sit at
    // tl + 50 / 80 ms with tl = t0 + limitOffsetS: an analysis filter delays every arrival by
    // its energy delay, so without the offset a WAV path would count a share of the energy
    // arriving just before t0 + 50 ms as late (and add the delay to Ts) that the ideal band
    // response (the histogram) counts as early (ISO 3382-1 A.2.3-A.2.5 define the limits on
    // the arrival times of the response, not of the filter output).
    const EnvelopeIntegrator er(bi.ratios ? *bi.ratios : *bi.omni);
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
        const EnvelopeIntegrator sq(*bi.lateralSq), ab(*bi.lateralAbs);
        out.lf = sq.Energy(tl + 0.005, tl + 0.080) / e80;
        out.lfc = ab.Energy(tl + 0.005, tl + 0.080) / e80;
    }

    // Modulation transfer (Schroeder 1981) over the whole response, for STI.
    double omega[kModulationCount];
    std::complex<double> spectrum[kModulationCount];
    for (int f = 0; f < kModulationCount; ++f) omega[f] = 2.0 * M_PI * kModulationHz[f];
    er.FourierMany(omega, kModulationCount, spectrum);
    for (int f = 0; f < kModulationCount; ++f) out.mtf[f] = std::abs(spectrum[f]) / er.Total();
    return out;
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
