#pragma once
// Private to engine/metrics: exact integrals of an EnergyEnvelope over any time interval
// (bins spread uniformly, impulses at their times, analytic exponential tail).
#include <complex>
#include <optional>
#include <string>
#include <vector>

#include "hallwright/metrics.h"

namespace hallwright::metrics_detail {

/* An envelope's impulses sorted by time (stable: equal times keep their order) with their
   running sums: built once and shared by every integrator over the same impulses (the
   histogram path's replicates differ only in their bins). */
struct SortedImpulses {
    std::vector<double> times, energies;        // by ascending time
    std::vector<double> prefix, momentPrefix;   // size + 1 entries
    /* Sorts `impulses` (any order) and sums them. */
    void Assign(const std::vector<TimedEnergy>& impulses);
    size_t Before(double t) const;              // index of the first impulse at or after t
};

class EnvelopeIntegrator {
  public:
    EnvelopeIntegrator() = default;
    explicit EnvelopeIntegrator(const EnergyEnvelope& env) { Build(env); }
    EnvelopeIntegrator(const EnvelopeIntegrator&) = delete;
    EnvelopeIntegrator& operator=(const EnvelopeIntegrator&) = delete;
    /* (Re)builds over env (its own impulses); the storage is reused. env must outlive use. */
    void Build(const EnergyEnvelope& env);
    /* Same over env's bins and tail with `impulses` in place of env.impulses (which are
       ignored); `impulses` must outlive use. */
    void Build(const EnergyEnvelope& env, const SortedImpulses& impulses);
    /* Recomputes the totals after env's tail changed (bins and impulses unchanged). */
    void RefreshTotals();
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
    double EnergyAfter(double t) const { return EnergyAfterFrom(t, imp_->Before(t)); }
    /* EnergyAfter(t) given imp = the index of the first impulse at or after t (for sweeps). */
    double EnergyAfterFrom(double t, size_t imp) const;
    const SortedImpulses& Impulses() const { return *imp_; }
    /* Integral of e(t) e^{-j w t} dt over the whole envelope. */
    std::complex<double> Fourier(double omega) const;
    /* Fourier at several angular frequencies in one pass over the bins (independent phase
       rotations per frequency, so the loop is not latency-bound); out[i] = Fourier(omega[i]). */
    void FourierMany(const double* omega, int count, std::complex<double>* out) const;
    const EnergyEnvelope& Envelope() const { return *env_; }

  private:
    const EnergyEnvelope* env_ = nullptr;
    const SortedImpulses* imp_ = nullptr;
    SortedImpulses ownImpulses_;
    std::vector<double> binPrefix_, binMomentPrefix_;  // n + 1 entries
    std::vector<double> binSuffix_;                    // sum from k to the end (exact zeros stay 0)
    double total_ = 0, totalMoment_ = 0;
    void BuildBins();
    double TailEnergyBefore(double t) const;
    double EffectiveBinStart(size_t k) const;          // bin start, not before earliestS
    double BinFraction(size_t k, double t) const;      // share of bin k's energy before t
    double TailMomentBefore(double t) const;
};

/* Decay-time fit result (ISO 3382-1 evaluation ranges). */
struct FitResult {
    std::optional<double> t;
    double r = 0;
    std::string note;
};

/* FitTail on an integrator already built over env with no tail; sets env.tail* and
   refreshes the integrator's totals. Same result as FitTail(env, t0, endS). */
bool FitTailWith(EnergyEnvelope& env, EnvelopeIntegrator& in, double t0, double endS);

/* ComputeBandParameters on integrators already built over bi's envelopes (omni, the ratios'
   envelope or omni again, and the lateral ones when bi has them). Same result. */
BandParameters ComputeBandParametersWith(const BandInput& bi, const EnvelopeIntegrator& omni,
                                         const EnvelopeIntegrator& ratios,
                                         const EnvelopeIntegrator* lateralSq,
                                         const EnvelopeIntegrator* lateralAbs);

}  // namespace hallwright::metrics_detail
