#pragma once
// Octave-band analysis filters for impulse responses: digital Butterworth band-passes
// (prototype order N per side, i.e. a 2N-pole band-pass) from the bilinear transform with
// pre-warped IEC 61260-1 base-ten band edges, realised as N biquad sections in double
// precision. Order 4 (the default) meets the class 1 acceptance limits of IEC 61260-1:2014 (tested at the
// standard's normalised frequencies, tests/metrics/octave_filter_test.cpp). The -3 dB points
// sit exactly on the band edges f1, f2.
#include <complex>
#include <optional>
#include <vector>

namespace hallwright {

struct Biquad {
    double b0 = 1, b1 = 0, b2 = 0, a1 = 0, a2 = 0;  // H(z) = (b0 + b1 z^-1 + b2 z^-2) / (1 + a1 z^-1 + a2 z^-2)
};

class OctaveFilter {
  public:
    static constexpr int kDefaultOrder = 4;
    /* Designs the filter of band index `band` (0 = 63 Hz ... 7 = 8 kHz); nothing when the
       upper band edge is not below the Nyquist frequency. */
    static std::optional<OctaveFilter> Design(int band, int sampleRate, int order = kDefaultOrder);
    /* Complex response at frequency f (Hz); |H(f_m)| = 1 at the exact mid-band. */
    std::complex<double> Response(double frequencyHz) const;
    /* Attenuation -20 lg|H(f)| in dB. */
    double AttenuationDb(double frequencyHz) const;
    /* Filters x (forward), or time-reversed (reverse, filter, reverse back: the ringing then
       precedes the decay, Jacobsen & Rindel 1987, allowed by ISO 3382). */
    std::vector<double> Apply(const std::vector<double>& x, bool timeReversed = false) const;
    /* Energy sum_n h(n)^2 of the filter's response to a unit Dirac (white-input share). */
    double DiracEnergy() const;
    /* Energy centroid sum_n n h(n)^2 / sum_n h(n)^2 of the Dirac response, in seconds: how
       much later the filter output carries an arrival's energy (forward filtering). */
    double EnergyDelayS() const;
    int Band() const { return band_; }
    int SampleRate() const { return sampleRate_; }

  private:
    int band_ = 0, sampleRate_ = 0;
    std::vector<Biquad> sections_;
};

}  // namespace hallwright
