#pragma once
// Test-side analysis filter for synthesized IRs (independent of the synthesis bank's design):
// zero-phase FFT band-pass for octave band b with raised-cosine skirts of +-1/8 octave centred
// on the IEC 61260-1 base-ten edges f1, f2 (REFERENCES Part B 4), so the magnitude is 0.5 at
// each edge and the analysis bands also sum to one. Calibration: the band energy of a unit
// Dirac, alpha_b = sum_n a_b(n)^2, from Parseval on the same FFT grid.
#include <algorithm>
#include <cmath>
#include <complex>
#include <vector>

#include "hallwright/bands.h"
#include "hallwright/response.h"
#include "response/fft.h"

namespace hallwright::test {

constexpr double kAnalysisHalfWidthOct = 1.0 / 8.0;

inline double AnalysisRise(double f, double edge) {
    if (f <= 0) return 0;
    const double u = std::log2(f / edge) / kAnalysisHalfWidthOct;
    if (u <= -1) return 0;
    if (u >= 1) return 1;
    return 0.5 * (1.0 + std::sin(0.5 * M_PI * u));
}

inline double AnalysisMagnitude(int band, double f) {
    double m = 1.0;
    if (band > 0) m *= AnalysisRise(f, BandLowerEdgeHz(band));
    // Every band, 8 kHz included, ends at its upper IEC edge (the synthesized pulse's
    // windowed-sinc roll-off near Nyquist then stays outside the analysis bands).
    m *= 1.0 - AnalysisRise(f, BandUpperEdgeHz(band));
    return m;
}

/* One band of a signal: y[offset + n] is the filtered value at sample n (n may be negative
   down to -offset: the zero-phase filter rings before the first sample). */
struct BandSignal {
    std::vector<double> y;
    int offset = 0;
    double At(int n) const { return y[n + offset]; }
    double Energy(int n0, int n1) const {  // sum over [n0, n1) in signal samples
        double s = 0;
        for (int n = std::max(n0, -offset); n < std::min<int>(n1, (int)y.size() - offset); ++n)
            s += y[n + offset] * y[n + offset];
        return s;
    }
    double Total() const { return Energy(-offset, (int)y.size() - offset); }
};

struct BandAnalysis {
    std::vector<BandSignal> bands;  // kBandCount
    Bands alpha = Bands::Zero();     // calibration: band energy of a unit Dirac
};

inline BandAnalysis AnalyseBands(const std::vector<float>& x, int sampleRate) {
    const int pad = sampleRate / 2;  // 0.5 s each side: the skirts' ringing stays inside
    const int n = static_cast<int>(x.size());
    hallwright::RealFft fft(hallwright::FastRealFftSize(n + 2 * pad));
    const int m = fft.Size(), bins = fft.BinCount();
    std::vector<float> buf(m, 0.0f), out(m);
    std::copy(x.begin(), x.end(), buf.begin() + pad);
    std::vector<std::complex<float>> spec(bins), band(bins);
    fft.Forward(buf.data(), spec.data());
    BandAnalysis result;
    for (int b = 0; b < kBandCount; ++b) {
        double sum = 0;
        for (int i = 0; i < bins; ++i) {
            const double a = AnalysisMagnitude(b, static_cast<double>(i) * sampleRate / m);
            band[i] = spec[i] * static_cast<float>(a);
            sum += ((i == 0 || i == bins - 1) ? 1.0 : 2.0) * a * a;
        }
        result.alpha[b] = sum / m;
        fft.Inverse(band.data(), out.data());
        BandSignal s;
        s.offset = pad;
        s.y.assign(out.begin(), out.end());
        result.bands.push_back(std::move(s));
    }
    return result;
}

/* Share of alpha_b that lies inside the synthesis crossover around edge `crossover` (the
   band between lower band `crossover` and upper band `crossover + 1`). In that region the
   synthesized spectrum lies between the two neighbouring band levels, which bounds the
   leakage error rigorously. */
inline double TransitionShare(int band, int crossover, int sampleRate) {
    const double fc = BandUpperEdgeHz(crossover);
    const double lo = fc * std::pow(2.0, -kCrossoverHalfWidthOct);
    const double hi = fc * std::pow(2.0, kCrossoverHalfWidthOct);
    // Midpoint rule on a log-frequency grid (df = f dln f), fine at the low bands too.
    double in = 0, all = 0;
    const int steps = 20000;
    const double fmin = 10.0, fmax = sampleRate / 2.0, span = std::log(fmax / fmin);
    for (int i = 0; i < steps; ++i) {
        const double f = fmin * std::exp((i + 0.5) * span / steps);
        const double a2 = AnalysisMagnitude(band, f) * AnalysisMagnitude(band, f) * f;
        all += a2;
        if (f > lo && f < hi) in += a2;
    }
    return in / all;
}

/* TransitionShare, computed once per (band, crossover) for the last sample rate used. */
inline double CachedTransitionShare(int band, int crossover, int sampleRate) {
    static int rate = 0;
    static double table[kBandCount][kBandCount];
    if (rate != sampleRate) {
        for (int b = 0; b < kBandCount; ++b)
            for (int c = 0; c < kBandCount - 1; ++c) table[b][c] = TransitionShare(b, c, sampleRate);
        rate = sampleRate;
    }
    return table[band][crossover];
}

/* Bounds [lo, hi] of (measured band energy / alpha_b) for a spectrum that is flat at level
   e[c] inside each synthesis band c and monotone between neighbours in the crossovers. */
inline std::pair<double, double> LeakageBounds(int band, const Bands& e, int sampleRate) {
    double lo = e[band], hi = e[band];
    for (int c : {band - 1, band}) {
        if (c < 0 || c >= kBandCount - 1) continue;  // no crossover above 8 kHz
        const int other = (c == band) ? band + 1 : band - 1;
        const double share = CachedTransitionShare(band, c, sampleRate);
        lo += share * std::min(0.0, e[other] - e[band]);
        hi += share * std::max(0.0, e[other] - e[band]);
    }
    return {lo, hi};
}

}  // namespace hallwright::test
