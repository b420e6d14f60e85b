// Histogram path: parameters of one (source, receiver) from its specular paths and the
// tracer's batched histogram, with delete-one-batch jackknife intervals (metrics.h).
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <limits>
#include <utility>
#if defined(__SSE2__)
#include <emmintrin.h>
#endif

#include "hallwright/diagnostics.h"
#include "hallwright/metrics.h"
#include "hallwright/octave_filter.h"
#include "hallwright/response.h"
#include "hallwright/sti.h"
#include "metrics/envelope_integrator.h"
#include "metrics/parameter_rows.h"

namespace hallwright {

namespace {


/* Time zero: the earliest arrival within 20 dB of the broadband peak (ISO 3382-1 Annex A).
   Impulses and 1 ms bins are compared as energies per bin. */
double FindTimeZero(const ReceiverPaths& paths, const ReceiverHistogram& hist, bool& fromBins) {
    double peak = 0;
    for (const SpecularPath& p : paths.paths) peak = std::max(peak, p.energy.sum());
    std::vector<double> broadband(hist.binCount, 0.0);
    // Each bin's sum runs over batches and bands in that order; kBlock bins are summed side
    // by side (independent sums, so the additions overlap).
    constexpr int kBlock = 8;
    for (int k0 = 0; k0 < hist.binCount; k0 += kBlock) {
        const int m = std::min(kBlock, hist.binCount - k0);
        double s[kBlock] = {};
        for (int b = 0; b < kBatchCount; ++b) {
            const float* row = &hist.energy[(static_cast<size_t>(b) * hist.binCount + k0) * kBandCount];
            for (int band = 0; band < kBandCount; ++band)
                for (int j = 0; j < m; ++j) s[j] += static_cast<double>(row[j * kBandCount + band]);
        }
        for (int j = 0; j < m; ++j) {
            broadband[k0 + j] = s[j] / kBatchCount;
            peak = std::max(peak, broadband[k0 + j]);
        }
    }
    double t0 = std::numeric_limits<double>::infinity();
    fromBins = false;
    for (const SpecularPath& p : paths.paths)
        if (p.energy.sum() >= 0.01 * peak) t0 = std::min(t0, p.delayS);
    for (int k = 0; k < hist.binCount; ++k) {
        if (broadband[k] >= 0.01 * peak && peak > 0) {
            // Tracer energy cannot arrive before the direct delay |S - R| / c.
            const double tk = std::max(k * kBinWidthS, hist.directDelayS);
            if (tk < t0) {
                t0 = tk;
                fromBins = true;
            }
            break;
        }
    }
    return std::isfinite(t0) ? t0 : 0.0;
}

/* Cumulative energy response of the WAV path's octave filter (octave_filter.h) to a Dirac,
   at 48 kHz, normalised to 1: a specular arrival is seen through the same analysis filter as
   in a measured or synthesized IR, so its band energy is spread over the filter's ringing
   (a few ms at 1 kHz, about 20 ms at 125 Hz) and delayed by its group delay. Without this
   the histogram path would see each path as an instant step, and EDT of seats with a
   strong direct sound would depend on the time grid instead of matching the WAV path. */
constexpr int kKernelRate = 48000;
const std::vector<double>& CumulativeKernel(int band) {
    static const std::array<std::vector<double>, kBandCount> kernels = [] {
        std::array<std::vector<double>, kBandCount> out;
        for (int b = 0; b < kBandCount; ++b) {
            auto f = OctaveFilter::Design(b, kKernelRate);
            std::vector<double> d(kKernelRate / 2, 0.0);
            d[0] = 1.0;
            const std::vector<double> h = f->Apply(d);
            double total = 0;
            for (double v : h) total += v * v;
            std::vector<double>& c = out[b];
            double acc = 0;
            for (double v : h) {
                acc += v * v / total;
                c.push_back(acc);
                if (acc >= 1.0 - 1e-9) break;
            }
            c.back() = 1.0;
        }
        return out;
    }();
    return kernels[band];
}

/* Spectral selectivity of the same analysis filter: the share of band b and b' (their
   coherent product) that the filter of band c passes, for a response whose spectrum is the
   synthesis bank's (response.h: each band's level over its own range, smooth crossovers).
   W[c][b][b'] = int |A_c|^2 H_b H_b' df / int |A_c|^2 df, so a flat spectrum (all E_b
   equal) passes unchanged and, in general, the decay curve of band c is
   sum_{b,b'} W[c][b][b'] sqrt(E_b E_b'). A WAV analysed with class 1 octave filters reads
   the neighbouring bands' decays in the skirts of each filter (about -13 dB at 500 Hz for
   the synthesized IR); without this the histogram path's decay times are those of an ideal
   brick-wall band, which no measurement or WAV analysis reproduces. */
using LeakageTable = std::array<std::array<std::array<double, kBandCount>, kBandCount>, kBandCount>;
const LeakageTable& Leakage() {
    static const LeakageTable table = [] {
        LeakageTable w{};
        // 0.25 Hz steps up to Nyquist at kKernelRate: the narrowest crossover (63/125 Hz,
        // about 20 Hz wide) gets 80 points.
        constexpr double kStepHz = 0.25;
        const int steps = static_cast<int>(0.5 * kKernelRate / kStepHz);
        for (int c = 0; c < kBandCount; ++c) {
            auto f = OctaveFilter::Design(c, kKernelRate);
            double norm = 0;
            std::array<std::array<double, kBandCount>, kBandCount> acc{};
            std::array<double, kBandCount> h{};
            for (int i = 1; i < steps; ++i) {
                const double hz = i * kStepHz;
                const double a2 = std::norm(f->Response(hz));
                norm += a2;
                for (int b = 0; b < kBandCount; ++b) h[b] = SynthesisBandMagnitude(b, hz);
                for (int b = 0; b < kBandCount; ++b)
                    for (int bb = 0; bb < kBandCount; ++bb) acc[b][bb] += a2 * h[b] * h[bb];
            }
            for (int b = 0; b < kBandCount; ++b)
                for (int bb = 0; bb < kBandCount; ++bb) w[c][b][bb] = acc[b][bb] / norm;
        }
        return w;
    }();
    return table;
}

/* Band c's energy as its analysis filter reads it from per-band energies e_b (sqrt given). */
double ThroughSkirts(int c, const double* e, const double* root) {
    const auto& w = Leakage()[c];
    double s = 0;
    for (int b = std::max(0, c - 2); b <= std::min(kBandCount - 1, c + 2); ++b) {
        s += w[b][b] * e[b];
        if (b + 1 < kBandCount) s += 2.0 * w[b][b + 1] * root[b] * root[b + 1];
    }
    return s;
}

/* out[i] = sqrt(x[i]) (correctly rounded either way; two at a time where SSE2 has them). */
void SquareRoots(const double* x, size_t n, double* out) {
    size_t i = 0;
#if defined(__SSE2__)
    for (; i + 2 <= n; i += 2) _mm_storeu_pd(out + i, _mm_sqrt_pd(_mm_loadu_pd(x + i)));
#endif
    for (; i < n; ++i) out[i] = std::sqrt(x[i]);
}

/* ThroughSkirts of band c for every bin of a [bin][band] histogram (out[k] for bin k). */
void BinsThroughSkirts(int c, const double* e, const double* root, int binCount, double* out) {
    const auto& w = Leakage()[c];
    const int lo = std::max(0, c - 2), hi = std::min(kBandCount - 1, c + 2);
    // The table's terms hoisted out of the bin loop (the same products, in the same order).
    double diag[kBandCount], cross[kBandCount];
    for (int b = lo; b <= hi; ++b) {
        diag[b] = w[b][b];
        cross[b] = b + 1 < kBandCount ? 2.0 * w[b][b + 1] : 0.0;
    }
    for (int k = 0; k < binCount; ++k) {
        const double* ek = e + static_cast<size_t>(k) * kBandCount;
        const double* rk = root + static_cast<size_t>(k) * kBandCount;
        double s = 0;
        for (int b = lo; b <= hi; ++b) {
            s += diag[b] * ek[b];
            if (b + 1 < kBandCount) s += cross[b] * rk[b] * rk[b + 1];
        }
        out[k] = s;
    }
}

/* The first part of the kernel is kept at a fine time step (as impulses) instead of in the
   1 ms bins: with a dominant direct sound the first 10 dB of the decay curve fall within
   the filter's main lobe (well under 1 ms at 2 kHz), and a bin spreading that energy
   uniformly over 1 ms lengthens EDT by several JND-tenths against the sample-exact WAV path.
   kFineSteps steps of kFineStepSamples samples (0.125 ms, 4 ms in all) cover the main lobe
   of every band from 250 Hz up and most of it at 63/125 Hz. */
constexpr int kFineStepSamples = 6;
constexpr int kFineSteps = 32;

/* Adds energy e arriving at time t, spread by the band's kernel: its first kFineSteps steps
   as impulses (at the middle of each step), the rest into bins of width w starting at
   `start` (binCount of them), listed as (bin, energy) in `binAdds` in the order they are to
   be added; false (nothing added) when the spread would leave the bins. */
bool AddThroughFilter(size_t binCount, std::vector<std::pair<size_t, double>>& binAdds,
                      std::vector<TimedEnergy>& impulses, double start, double w, double t, double e,
                      int band) {
    const std::vector<double>& c = CumulativeKernel(band);
    const double span = static_cast<double>(c.size()) / kKernelRate;
    if (t < start || t + span > start + w * binCount) return false;
    auto cumAt = [&](size_t n) { return n == 0 ? 0.0 : (n >= c.size() ? 1.0 : c[n - 1]); };
    auto cum = [&](double x) {  // kernel energy arriving before t + x
        if (x <= 0) return 0.0;
        return cumAt(static_cast<size_t>(x * kKernelRate));
    };
    size_t fineEnd = 0;
    for (int s = 0; s < kFineSteps && fineEnd < c.size(); ++s) {
        const size_t a = fineEnd, b = std::min(c.size(), fineEnd + kFineStepSamples);
        const double share = cumAt(b) - cumAt(a);
        if (share > 0) impulses.push_back({t + 0.5 * static_cast<double>(a + b - 1) / kKernelRate, e * share});
        fineEnd = b;
    }
    const double fineDone = cumAt(fineEnd);
    if (fineDone >= 1.0) return true;
    // The rest: each bin edge is evaluated once, so every kernel sample lands in one bin.
    const double from = t + static_cast<double>(fineEnd) / kKernelRate;
    const size_t first = static_cast<size_t>((from - start) / w);
    double prev = std::max(fineDone, cum(start + first * w - t));
    for (size_t k = first; k < binCount; ++k) {
        const double b = start + (k + 1) * w - t;
        const double next = std::max(fineDone, cum(b));
        binAdds.emplace_back(k, e * (next - prev));
        prev = next;
        if (b >= span) break;
    }
    return true;
}

/* What the specular paths add to one band, the same in every replicate: the decay curve's
   impulses and bin shares (through the analysis filter), the exact-time impulses and the
   lateral ones, and where the specular energy ends. */
struct SpecularBand {
    metrics_detail::SortedImpulses omni, exact, lateralSq, lateralAbs;
    std::vector<std::pair<size_t, double>> omniBinAdds;  // in the order they are added
    double end = -std::numeric_limits<double>::infinity();
};

std::string Fmt(const char* fmt, double v) {
    char buf[64];
    std::snprintf(buf, sizeof buf, fmt, v);
    return buf;
}

}  // namespace

ParameterTable ParametersFromHistogram(const ReceiverPaths& paths, const ReceiverHistogram& hist,
                                       const HistogramMetricsOptions& options) {
    ParameterTable table;
    const int binCount = hist.binCount;
    const double endS = binCount * kBinWidthS;
    HW_CHECK(hist.energy.size() == static_cast<size_t>(kBatchCount) * binCount * kBandCount,
             "histogram energy has " + std::to_string(hist.energy.size()) + " entries");

    bool fromBins = false;
    const double t0 = FindTimeZero(paths, hist, fromBins);
    table.timeZeroS = t0;
    table.directOccluded = paths.directOccluded;
    if (paths.directOccluded)
        table.notes.push_back("direct sound occluded: time zero is the first arrival at " +
                              Fmt("%.2f", t0 * 1000) + " ms");
    if (fromBins)
        table.notes.push_back("time zero taken from the tracer's histogram (no specular arrival "
                              "within 20 dB of the peak)");

    // Lateral axis: horizontal and perpendicular to the source direction.
    std::optional<Vec3> srcDir = options.sourceDirection;
    if (!srcDir)
        for (const SpecularPath& p : paths.paths)
            if (p.order == 0) srcDir = p.arrivalFrom;
    std::optional<Vec3> lateralAxis;
    std::string lateralNote;
    if (srcDir) {
        Vec3 a = options.up.cross(*srcDir);
        if (a.norm() > 1e-6) lateralAxis = a.normalized();
        else lateralNote = "source straight above or below the seat: no lateral axis";
    } else {
        lateralNote = "source direction unknown (direct path occluded and none given)";
    }
    const bool haveLateralRecord =
        hist.lateralSq.size() == static_cast<size_t>(kBatchCount) * kLateralBins * kBandCount &&
        hist.lateralAbs.size() == hist.lateralSq.size();
    if (!haveLateralRecord && lateralNote.empty()) lateralNote = "no lateral record in the histogram";

    // Replicates: 0 = all rays, 1..B = one batch each, B+1..2B = all but one batch.
    const int replicates = 1 + 2 * kBatchCount;
    auto weights = [&](int r, int b) {
        if (r == 0) return 1.0 / kBatchCount;
        if (r <= kBatchCount) return (b == r - 1) ? 1.0 : 0.0;
        return (b == r - 1 - kBatchCount) ? 0.0 : 1.0 / (kBatchCount - 1);
    };
    std::vector<std::array<BandParameters, kBandCount>> results(replicates);
    // Bands computed: the reported ones and STI's (125 Hz ... 8 kHz = indices 1 ... 7).
    std::array<bool, kBandCount> needed{};
    for (int band : options.bands) needed[band] = true;
    for (int band = 1; band < kBandCount; ++band) needed[band] = true;
    const bool lateral = lateralAxis && haveLateralRecord;

    // The specular part of each band, once for all replicates.
    std::array<SpecularBand, kBandCount> specular;
    {
        std::vector<TimedEnergy> omniImp, exactImp, sqImp, abImp;
        for (int band = 0; band < kBandCount; ++band) {
            if (!needed[band]) continue;
            SpecularBand& sb = specular[band];
            omniImp.clear(), exactImp.clear(), sqImp.clear(), abImp.clear();
            for (const SpecularPath& p : paths.paths) {
                exactImp.push_back({p.delayS, p.energy[band]});
                double e[kBandCount], rt[kBandCount];
                for (int b = 0; b < kBandCount; ++b) e[b] = p.energy[b], rt[b] = std::sqrt(e[b]);
                const double seen = ThroughSkirts(band, e, rt);
                if (!AddThroughFilter(static_cast<size_t>(binCount), sb.omniBinAdds, omniImp, 0.0, kBinWidthS,
                                      p.delayS, seen, band))
                    omniImp.push_back({p.delayS, seen});
                if (p.energy[band] > 0)
                    sb.end = std::max(sb.end, std::min(endS, p.delayS + kBinWidthS +
                                      double(CumulativeKernel(band).size()) / kKernelRate));
                if (lateral) {
                    const double c = p.arrivalFrom.dot(*lateralAxis);
                    sqImp.push_back({p.delayS, p.energy[band] * c * c});
                    abImp.push_back({p.delayS, p.energy[band] * std::fabs(c)});
                }
            }
            sb.omni.Assign(omniImp);
            sb.exact.Assign(exactImp);
            sb.lateralSq.Assign(sqImp);
            sb.lateralAbs.Assign(abImp);
        }
    }

    // `exact`: the band's own energy, specular arrivals at their exact times (energy ratios,
    // Ts, G, LF, MTF). `omni`: the decay curve, as the WAV path's analysis filter reads it:
    // neighbouring bands through its skirts (Leakage) and each specular arrival spread over
    // its ringing (AddThroughFilter). Their impulses live in `specular`; the envelopes and
    // integrators are reused from band to band and replicate to replicate.
    EnergyEnvelope omni, exact, sq, ab;
    for (EnergyEnvelope* e : {&omni, &exact}) {
        e->binStartS = 0;
        e->binWidthS = kBinWidthS;
        e->earliestS = t0;
    }
    for (EnergyEnvelope* e : {&sq, &ab}) {
        e->binStartS = hist.directDelayS;
        e->binWidthS = kLateralWindowS / kLateralBins;
        e->earliestS = t0;
    }
    metrics_detail::EnvelopeIntegrator omniIn, exactIn, sqIn, abIn;
    std::vector<double> plain(static_cast<size_t>(binCount) * kBandCount), root(plain.size());
    for (int r = 0; r < replicates; ++r) {
        const bool skip = !options.perBatchValues && r >= 1 && r <= kBatchCount;
        if (skip) continue;
        // This replicate's mean histogram, [bin][band], and its square roots.
        // Summed batch by batch, a block of entries at a time (it stays in the L1 cache).
        constexpr size_t kBlock = 512;
        for (size_t i0 = 0; i0 < plain.size(); i0 += kBlock) {
            const size_t i1 = std::min(plain.size(), i0 + kBlock);
            std::fill(plain.begin() + i0, plain.begin() + i1, 0.0);
            for (int b = 0; b < kBatchCount; ++b) {
                const double w = weights(r, b);
                if (w == 0) continue;
                const float* batch = &hist.energy[static_cast<size_t>(b) * binCount * kBandCount];
                for (size_t i = i0; i < i1; ++i) plain[i] += w * static_cast<double>(batch[i]);
            }
            SquareRoots(plain.data() + i0, i1 - i0, root.data() + i0);
        }
        for (int band = 0; band < kBandCount; ++band) {
            if (!needed[band]) continue;
            const SpecularBand& sb = specular[band];
            omni.bins.resize(binCount);
            exact.bins.resize(binCount);
            for (int k = 0; k < binCount; ++k) exact.bins[k] = plain[static_cast<size_t>(k) * kBandCount + band];
            BinsThroughSkirts(band, plain.data(), root.data(), binCount, omni.bins.data());
            int last = binCount;  // end of the tracer's energy (before the specular part)
            while (last > 0 && exact.bins[last - 1] == 0) --last;
            for (const auto& [k, v] : sb.omniBinAdds) omni.bins[k] += v;
            // The record ends where the tracer's energy ends (rays that all died before the
            // histogram's end leave zeros, which are not a decay): tail and the dynamic-range
            // rule are read there.
            double recordEnd = std::max(last * kBinWidthS, sb.end);
            if (last == 0 || recordEnd <= t0) recordEnd = endS;  // purely specular: defined throughout
            const size_t kept = static_cast<size_t>(std::lround(std::ceil(recordEnd / kBinWidthS - 1e-9)));
            omni.bins.resize(kept);
            exact.bins.resize(kept);
            for (EnergyEnvelope* e : {&omni, &exact}) e->tailStartS = 0, e->tailRate = 0, e->tailDecay = 0;
            omniIn.Build(omni, sb.omni);
            exactIn.Build(exact, sb.exact);
            metrics_detail::FitTailWith(omni, omniIn, t0, recordEnd);
            metrics_detail::FitTailWith(exact, exactIn, t0, recordEnd);
            BandInput in;
            in.omni = &omni;
            in.ratios = &exact;
            in.timeZeroS = t0;
            in.endS = recordEnd;
            in.gridS = 0.0005;  // the WAV path's decay-curve grid (wav_metrics.h)
            in.referenceEnergy = kReferenceEnergy10m;
            if (lateral) {
                sq.bins.assign(kLateralBins, 0.0);
                ab.bins.assign(kLateralBins, 0.0);
                for (int b = 0; b < kBatchCount; ++b) {
                    const double w = weights(r, b);
                    if (w == 0) continue;
                    for (int k = 0; k < kLateralBins; ++k) {
                        const size_t i = (static_cast<size_t>(b) * kLateralBins + k) * kBandCount + band;
                        sq.bins[k] += w * hist.lateralSq[i];
                        ab.bins[k] += w * hist.lateralAbs[i];
                    }
                }
                sqIn.Build(sq, sb.lateralSq);
                abIn.Build(ab, sb.lateralAbs);
                in.lateralSq = &sq;
                in.lateralAbs = &ab;
                // The tracer's lateral record covers [direct, direct + 100 ms).
                in.lateralValidFromS = hist.directDelayS;
                in.lateralValidToS = hist.directDelayS + kLateralWindowS;
            }
            results[r][band] = metrics_detail::ComputeBandParametersWith(in, omniIn, exactIn,
                                                                         lateral ? &sqIn : nullptr,
                                                                         lateral ? &abIn : nullptr);
            results[r][band].recordEndS = recordEnd;
            if (!in.lateralSq) results[r][band].lateralNote = lateralNote;
        }
    }

    // STI per replicate (bands 125 Hz ... 8 kHz = indices 1 ... 7).
    std::vector<StiResult> sti(replicates);
    std::vector<bool> computed(replicates, true);
    for (int r = 1; r <= kBatchCount; ++r) computed[r] = options.perBatchValues;
    for (int r = 0; r < replicates; ++r) {
        if (!computed[r]) continue;
        Mtf mtf;
        std::array<double, kStiBands> transfer{};
        for (int k = 0; k < kStiBands; ++k) {
            mtf[k] = results[r][k + 1].mtf;
            // Band energy re the 1 m free-field energy 1/(4 pi) of a unit source.
            transfer[k] = 10.0 * std::log10(std::max(results[r][k + 1].totalEnergy, 1e-300) * 4.0 * M_PI);
        }
        std::optional<std::array<double, kStiBands>> noise;
        if (options.speech.noiseOctaveDb) {
            noise.emplace();
            for (int k = 0; k < kStiBands; ++k) (*noise)[k] = (*options.speech.noiseOctaveDb)[k + 1];
        }
        sti[r] = ComputeSti(mtf, options.speech.speechLevelDbA,
                            options.speech.Any() ? std::optional(transfer) : std::nullopt, noise);
    }

    // Rows: value from replicate 0, per-batch values, leave-one-out replicates, CI95.
    using metrics_detail::RowBuilder;
    RowBuilder rows(table, kBatchCount);
    for (int band : options.bands) {
        const int hz = kNominalBandHz[band];
        auto get = [&](auto field) {
            std::vector<std::optional<double>> v(replicates);
            for (int r = 0; r < replicates; ++r)
                if (computed[r]) v[r] = field(results[r][band]);
            return v;
        };
        const BandParameters& all = results[0][band];
        rows.Add("EDT", hz, "s", get([](const BandParameters& p) { return p.edt; }), all.edtNote);
        rows.Add("T20", hz, "s", get([](const BandParameters& p) { return p.t20; }), all.t20Note);
        rows.Add("T30", hz, "s", get([](const BandParameters& p) { return p.t30; }), all.t30Note);
        auto suggest = [&](double needDb) -> std::string {
            if (all.decayEndDb <= needDb) return "";
            const double slope = all.lateSlopeDbPerS < 0 ? all.lateSlopeDbPerS
                                 : all.edt             ? -60.0 / *all.edt
                                                       : 0.0;
            if (all.recordEndS < endS - 0.05)
                return "; the tracer's energy ends at " + Fmt("%.2f", all.recordEndS) +
                       " s, before duration_s: raise the rays' energy threshold or reflection limit";
            if (!(slope < 0)) return "; raise duration_s";
            const double extra = (all.decayEndDb - needDb) / -slope;
            const double suggestion = std::ceil((endS + 1.1 * extra) * 10.0) / 10.0;
            return "; raise duration_s to " + Fmt("%.1f", suggestion);
        };
        if (!all.t20) rows.AppendNote("T20", hz, suggest(-35.0));
        if (!all.t30) rows.AppendNote("T30", hz, suggest(-45.0));
        if (!all.edt) rows.AppendNote("EDT", hz, suggest(-20.0));
        rows.Add("EDT_r", hz, "ratio", get([](const BandParameters& p) {
            return p.edt ? std::optional(p.edtR) : std::nullopt; }), all.edtNote, false);
        rows.Add("T20_r", hz, "ratio", get([](const BandParameters& p) {
            return p.t20 ? std::optional(p.t20R) : std::nullopt; }), all.t20Note, false);
        rows.Add("T30_r", hz, "ratio", get([](const BandParameters& p) {
            return p.t30 ? std::optional(p.t30R) : std::nullopt; }), all.t30Note, false);
        rows.Add("Curvature", hz, "%", get([](const BandParameters& p) -> std::optional<double> {
            if (!p.t20 || !p.t30) return std::nullopt;
            return 100.0 * (*p.t30 / *p.t20 - 1.0); }), all.t30 ? all.t20Note : all.t30Note);
        rows.Add("C50", hz, "dB", get([](const BandParameters& p) { return p.c50; }), all.energyNote);
        rows.Add("C80", hz, "dB", get([](const BandParameters& p) { return p.c80; }), all.energyNote);
        rows.Add("D50", hz, "ratio", get([](const BandParameters& p) { return p.d50; }), all.energyNote);
        rows.Add("Ts", hz, "ms", get([](const BandParameters& p) -> std::optional<double> {
            if (!p.ts) return std::nullopt;
            return *p.ts * 1000.0; }), all.energyNote);
        rows.Add("G", hz, "dB", get([](const BandParameters& p) { return p.g; }), all.gNote);
        rows.Add("LF", hz, "ratio", get([](const BandParameters& p) { return p.lf; }), all.lateralNote);
        rows.Add("LFC", hz, "ratio", get([](const BandParameters& p) { return p.lfc; }), all.lateralNote);
    }
    {
        std::vector<std::optional<double>> v(replicates);
        for (int r = 0; r < replicates; ++r)
            if (computed[r]) v[r] = sti[r].sti;
        rows.Add("STI", 0, "ratio", v, sti[0].note);
        if (options.perBandMti)
            for (int k = 0; k < kStiBands; ++k) {
                for (int r = 0; r < replicates; ++r)
                    if (computed[r]) v[r] = sti[r].mti[k];
                rows.Add("MTI", kNominalBandHz[k + 1], "ratio", v, "");
            }
    }
    AddSingleNumbers(table);
    return table;
}

}  // namespace hallwright
