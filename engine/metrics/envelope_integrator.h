#pragma once
// Private to engine/metrics: exact integrals of an EnergyEnvelope over any time interval
// (bins spread uniformly, impulses at their times, analytic exponential tail).
#include <complex>
#include <vector>

#include "hallwright/metrics.h"

namespace hallwright::metrics_detail {

class EnvelopeIntegrator {
  public:
    explicit EnvelopeIntegrator(const EnergyEnvelope& env);
    /* Energy arriving before t (impulses exactly at t excluded). */
    double EnergyBefore(double t) const;
    /* Integral of t e(t) dt before t. */
    double MomentBefore(double t) const;
    double Total() const { return total_; }
    double TotalMoment() const { return totalMoment_; }
    /* Energy in [a, b). */
    double Energy(double a, double b) const { return EnergyBefore(b) - EnergyBefore(a); }
    /* Energy in [a, b) summed bin by bin (no prefix differences: silent stretches give 0). */
    double EnergyDirect(double a, double b) const;
    /* Energy from t to the end, including the tail (the Schroeder integral). */
    double EnergyAfter(double t) const;
    /* Integral of e(t) e^{-j w t} dt over the whole envelope. */
    std::complex<double> Fourier(double omega) const;
    /* Fourier at several angular frequencies in one pass over the bins (independent phase
       rotations per frequency, so the loop is not latency-bound); out[i] = Fourier(omega[i]). */
    void FourierMany(const double* omega, int count, std::complex<double>* out) const;
    const EnergyEnvelope& Envelope() const { return env_; }

  private:
    const EnergyEnvelope& env_;
    std::vector<double> binPrefix_, binMomentPrefix_;  // n + 1 entries
    std::vector<double> binSuffix_;                    // sum from k to the end (exact zeros stay 0)
    std::vector<TimedEnergy> impulses_;                // sorted by time
    std::vector<double> impPrefix_, impMomentPrefix_;
    double total_ = 0, totalMoment_ = 0;
    double TailEnergyBefore(double t) const;
    double EffectiveBinStart(size_t k) const;          // bin start, not before earliestS
    double BinFraction(size_t k, double t) const;      // share of bin k's energy before t
    double TailMomentBefore(double t) const;
};

}  // namespace hallwright::metrics_detail
