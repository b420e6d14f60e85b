// Butterworth octave band-pass filters (octave_filter.h): analog prototype poles, low-pass to
// band-pass transform, bilinear transform with pre-warped edges, biquad cascade.
#include "hallwright/octave_filter.h"

#include <algorithm>
#include <cmath>

#include "hallwright/bands.h"

namespace hallwright {

std::optional<OctaveFilter> OctaveFilter::Design(int band, int sampleRate, int order) {
    if (band < 0 || band >= kBandCount || sampleRate <= 0 || order < 1) return std::nullopt;
    const double fs = sampleRate;
    const double f1 = BandLowerEdgeHz(band), f2 = BandUpperEdgeHz(band);
    if (f2 >= 0.5 * fs * 0.98) return std::nullopt;
    // Pre-warped analog edges, so the digital -3 dB points fall on f1 and f2.
    const double w1 = 2 * fs * std::tan(M_PI * f1 / fs), w2 = 2 * fs * std::tan(M_PI * f2 / fs);
    const double w0sq = w1 * w2, bw = w2 - w1;
    using C = std::complex<double>;
    OctaveFilter f;
    f.band_ = band;
    f.sampleRate_ = sampleRate;
    // Each prototype pole p gives two band-pass poles, roots of s^2 - p B s + w0^2 = 0; keep
    // those in the upper half plane, each with its conjugate forming one biquad.
    std::vector<C> poles;
    for (int k = 0; k < order; ++k) {
        const C p = std::polar(1.0, M_PI * (2.0 * k + order + 1) / (2.0 * order));
        const C disc = std::sqrt(p * p * bw * bw - 4.0 * w0sq);
        for (const C s : {0.5 * (p * bw + disc), 0.5 * (p * bw - disc)})
            if (s.imag() > 0) poles.push_back(s);
    }
    for (const C s : poles) {
        const C z = (1.0 + s / (2 * fs)) / (1.0 - s / (2 * fs));
        Biquad q;
        q.b0 = 1, q.b1 = 0, q.b2 = -1;  // zeros at z = 1 (DC) and z = -1 (Nyquist)
        q.a1 = -2 * z.real();
        q.a2 = std::norm(z);
        f.sections_.push_back(q);
    }
    // Unit gain at the exact mid-band, shared equally by the sections.
    const double g = std::abs(f.Response(ExactMidbandHz(band)));
    const double per = std::pow(1.0 / g, 1.0 / f.sections_.size());
    for (Biquad& q : f.sections_) q.b0 *= per, q.b2 *= per;
    return f;
}

std::complex<double> OctaveFilter::Response(double frequency) const {
    using C = std::complex<double>;
    const C zi = std::polar(1.0, -2 * M_PI * frequency / sampleRate_);  // z^-1
    C h = 1;
    for (const Biquad& q : sections_)
        h *= (q.b0 + zi * (q.b1 + zi * q.b2)) / (1.0 + zi * (q.a1 + zi * q.a2));
    return h;
}

double OctaveFilter::AttenuationDb(double frequency) const {
    return -20.0 * std::log10(std::abs(Response(frequency)));
}

std::vector<double> OctaveFilter::Apply(const std::vector<double>& x, bool timeReversed) const {
    std::vector<double> y = x;
    if (timeReversed) std::reverse(y.begin(), y.end());
    // Direct form II transposed, section after section.
    for (const Biquad& q : sections_) {
        double s1 = 0, s2 = 0;
        for (double& v : y) {
            const double in = v;
            const double out = q.b0 * in + s1;
            s1 = q.b1 * in - q.a1 * out + s2;
            s2 = q.b2 * in - q.a2 * out;
            v = out;
        }
    }
    if (timeReversed) std::reverse(y.begin(), y.end());
    return y;
}

double OctaveFilter::DiracEnergy() const {
    // Half a second: the 63 Hz band's ringing has fallen by far more than 200 dB by then.
    const size_t n = static_cast<size_t>(std::max(4096.0, 0.5 * sampleRate_));
    std::vector<double> d(n, 0.0);
    d[0] = 1.0;
    double e = 0;
    for (double v : Apply(d)) e += v * v;
    return e;
}

double OctaveFilter::EnergyDelayS() const {
    const size_t n = static_cast<size_t>(std::max(4096.0, 0.5 * sampleRate_));
    std::vector<double> d(n, 0.0);
    d[0] = 1.0;
    double e = 0, m = 0;
    const std::vector<double> h = Apply(d);
    for (size_t i = 0; i < h.size(); ++i) e += h[i] * h[i], m += static_cast<double>(i) * h[i] * h[i];
    return e > 0 ? m / e / sampleRate_ : 0.0;
}

}  // namespace hallwright
