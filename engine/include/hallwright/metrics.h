#pragma once
// Room-acoustic parameters of ISO 3382-1 (and STI, IEC 60268-16) from one band-energy
// computation that serves both inputs: a predicted energy histogram (with its specular paths)
// and an impulse response read from a WAV file (wav_metrics.h).
//
// Conventions (both paths):
// - Time zero t0: the first arrival where the broadband response reaches 20 dB below its peak
//   (ISO 3382-1:2009 Annex A). For a histogram the candidates are the exact specular arrival
//   times and the 1 ms bins (a bin and an impulse are compared as energies per 1 ms); a seat
//   whose direct sound is occluded uses the same rule on its first arrival and is flagged.
// - Energies are integrated over exact times: a histogram bin k holds the energy arriving in
//   [k, k+1) ms after emission, spread uniformly inside the bin, so a limit such as t0 + 50 ms
//   takes the matching fraction of the bin it falls in; specular impulses sit at their exact
//   delays and count on the side of the limit they fall on (an impulse exactly at a limit
//   counts as later, intervals are [a, b)). No energy arrives before t0: the bin holding t0
//   spreads its energy over [t0, bin end) only.
// - Histogram path, decay curves: each specular arrival (exact delay) is seen through the WAV
//   path's octave filter (octave_filter.h): its band energy is spread over that filter's
//   energy response |h_b(t)|^2 (the first 4 ms at 0.125 ms steps, the rest in the 1 ms
//   bins), as a measured or synthesized IR would be analysed, so EDT of seats with a strong
//   direct sound does not depend on the time grid. Energy ratios, Ts, LF/LFC and the MTF
//   read the specular arrivals at their exact times.
// - WAV path: its analysis filter delays every arrival's band energy by the filter's energy
//   centroid (OctaveFilter::EnergyDelayS, ~2 ms at 500 Hz); the 5/50/80 ms limits and Ts's
//   origin move with it (BandInput::limitOffsetS), so both paths split the same arrivals
//   into early and late (ISO 3382-1 A.2 defines the limits on arrival times).
// - Decay curves: Schroeder backward integration (1965) with an exponential tail
//   compensation beyond the end of the record (Lundeby et al. 1995); T from a least-squares
//   line on L(t) over 0..-10 dB (EDT), -5..-25 dB (T20), -5..-35 dB (T30) (ISO 3382-1/-2).
//   A decay curve whose record ends less than 10 dB below the bottom of an evaluation range
//   (i.e. less than 20, 35, 45 dB down for EDT, T20, T30) gives no value, only the reason.
// - Intervals (histogram path): the value uses all rays (mean of the B batches + specular);
//   its standard error is the delete-one-batch jackknife over the B batches; CI95 =
//   t(0.975, B-1) x SE. They cover Monte Carlo noise only, not uncertainty in material data.
#include <array>
#include <optional>
#include <string>
#include <vector>

#include "hallwright/bands.h"
#include "hallwright/mesh.h"
#include "hallwright/propagation.h"
#include "hallwright/zones.h"

namespace hallwright {

/* One parameter value of one band (or a single number) for one source-receiver pair. */
struct ParameterValue {
    std::string parameter;          // "EDT", "T30", "C80", "T30_r", "EDT_M", "STI", "MTI", ...
    int band = 0;                   // nominal Hz (125 ... 8000), 0 = single number ("avg")
    std::string unit;               // "s", "ms", "dB", "ratio", "%"
    std::optional<double> value;    // empty when it cannot be computed (note says why)
    std::optional<double> ci95;     // half-width of the 95 % interval (histogram path only)
    std::string note;
    // Histogram path only (B entries each, NaN where the value is missing or not computed):
    std::vector<double> perBatch;     // specular + one batch's tracer part
    std::vector<double> leaveOneOut;  // jackknife replicates: specular + all batches but b
};

/* All parameters of one source-receiver pair. */
struct ParameterTable {
    std::vector<ParameterValue> values;
    double timeZeroS = 0;           // t0 (s from emission, or from the file's first sample)
    bool directOccluded = false;    // t0 taken on the first arrival, not the direct sound
    std::vector<std::string> notes; // table-wide remarks (e.g. the occlusion flag)

    /* The entry for (parameter, band), or nullptr. */
    const ParameterValue* Find(const std::string& parameter, int band = 0) const;
};

/* A just-noticeable difference (ISO 3382-1:2009 Table A.1 and others). */
struct ParameterJnd {
    const char* parameter;
    double value;     // in the parameter's unit, or a fraction when relative
    bool relative;    // true: JND = value x parameter (EDT, T20, T30)
    const char* source;
};

/* JNDs travelling with the tables (sources in the `source` field). */
inline constexpr std::array<ParameterJnd, 12> kJndTable = {{
    {"EDT", 0.05, true, "ISO 3382-1:2009 Table A.1 (from memory)"},
    {"T20", 0.05, true, "ISO 3382-1:2009 Table A.1 applied to T (from memory)"},
    {"T30", 0.05, true, "ISO 3382-1:2009 Table A.1 applied to T (from memory)"},
    {"C80", 1.0, false, "ISO 3382-1:2009 Table A.1 (from memory)"},
    {"C50", 1.0, false, "common practice, no source (same as C80)"},
    {"D50", 0.05, false, "ISO 3382-1:2009 Table A.1 (from memory)"},
    {"Ts", 10.0, false, "ISO 3382-1:2009 Table A.1 (from memory)"},
    {"G", 1.0, false, "ISO 3382-1:2009 Table A.1 (from memory)"},
    {"LF", 0.05, false, "ISO 3382-1:2009 Table A.1 (from memory)"},
    {"LFC", 0.05, false, "ISO 3382-1:2009 Table A.1 lists J_LF and J_LFC together (from memory)"},
    {"STI", 0.03, false, "Galbrun & Kitapci, Applied Acoustics 81 (2014) 1-14"},
    {"IACC_E", 0.075, false, "Cox, Davies & Lam, Acustica 79 (1993) (from memory, uncertain)"},
}};

/* The JND of a parameter (a trailing "_M" is ignored), or nullptr. */
const ParameterJnd* FindJnd(const std::string& parameter);
/* The JND in the parameter's unit at the given value (relative JNDs scale with it). */
std::optional<double> JndAt(const std::string& parameter, double value);

/* A single-number average of ISO 3382-1 Annex A: mean of the listed octave values. */
struct SingleNumber {
    const char* name;       // "EDT_M"
    const char* parameter;  // "EDT"
    std::array<int, 4> bandsHz;  // nominal octaves averaged (0 = unused slot)
};
inline constexpr std::array<SingleNumber, 10> kSingleNumbers = {{
    {"EDT_M", "EDT", {500, 1000, 0, 0}}, {"T20_M", "T20", {500, 1000, 0, 0}},
    {"T30_M", "T30", {500, 1000, 0, 0}}, {"C50_M", "C50", {500, 1000, 0, 0}},
    {"C80_M", "C80", {500, 1000, 0, 0}}, {"D50_M", "D50", {500, 1000, 0, 0}},
    {"Ts_M", "Ts", {500, 1000, 0, 0}},   {"G_M", "G", {500, 1000, 0, 0}},
    {"LF_M", "LF", {125, 250, 500, 1000}}, {"LFC_M", "LFC", {125, 250, 500, 1000}},
}};

// ---------------------------------------------------------------------------------------
// Band-energy core

struct TimedEnergy {
    double timeS = 0;
    double energy = 0;
};

/* One band's energy against time: uniform bins, exact-time impulses and an optional
   exponential tail (the compensation beyond the end of the record). */
struct EnergyEnvelope {
    double binStartS = 0;              // start time of bin 0
    double binWidthS = kBinWidthS;
    std::vector<double> bins;          // energy in [start + k w, start + (k + 1) w)
    double earliestS = -1e300;         // no energy before this time: the bin containing it
                                       // spreads its energy over [earliestS, bin end)
    std::vector<TimedEnergy> impulses; // any order
    double tailStartS = 0;             // tail energy rate tailRate e^(-tailDecay (t - start))
    double tailRate = 0;               // per second, for t >= tailStartS (0 = no tail)
    double tailDecay = 0;              // 1/s
};

/* Level-dependent STI terms (IEC 60268-16:2011): speech level and background noise. */
struct SpeechConditions {
    std::optional<double> speechLevelDbA;     // A-weighted speech level at 1 m in front of the talker
    std::optional<Bands> noiseOctaveDb;       // background noise, octave SPL at the seat (dB)
    bool Any() const { return speechLevelDbA || noiseOctaveDb; }
};

/* Parameters of one band computed by the core (no batches, no single numbers). */
struct BandParameters {
    std::optional<double> edt, t20, t30;     // s
    double edtR = 0, t20R = 0, t30R = 0;     // |correlation| of the least-squares fits
    std::optional<double> c50, c80, d50, ts, g, lf, lfc;  // dB, dB, ratio, s, dB, ratio, ratio
    std::string edtNote, t20Note, t30Note, energyNote, lateralNote, gNote;
    std::array<double, 14> mtf{};            // modulation transfer m(F) (no noise terms)
    double totalEnergy = 0;                  // whole response incl. tail
    double decayEndDb = 0;                   // level of the decay curve at the end of the record
    double lateSlopeDbPerS = 0;              // slope of the tail compensation (dB/s, < 0)
    double recordEndS = 0;                   // where the record (or its energy) ends
};

/* Inputs of the core for one band. `lateralSq`/`lateralAbs` may be null (no LF/LFC);
   `endS` is where the record (or its truncation) ends; referenceEnergy <= 0: no G.
   `gridS` is the spacing of decay-curve points used in the fits. */
struct BandInput {
    const EnergyEnvelope* omni = nullptr;
    const EnergyEnvelope* lateralSq = nullptr;
    const EnergyEnvelope* lateralAbs = nullptr;
    double timeZeroS = 0;
    double endS = 0;
    double gridS = kBinWidthS;
    double referenceEnergy = 0;
    double lateralValidFromS = -1e300, lateralValidToS = 1e300;  // span covered by the record
    /* Envelope for the energy ratios, Ts, LF/LFC denominators and the MTF (default: omni).
       The histogram path gives its specular arrivals here at their exact times, while
       `omni` (decay curves) sees them through the analysis filter. */
    const EnergyEnvelope* ratios = nullptr;
    /* Delay added to the 5/50/80 ms limits and to Ts's time origin: the WAV path's
       analysis-filter energy delay (every arrival, direct or late, reaches the band output
       that much later). 0 for the histogram path. */
    double limitOffsetS = 0;
};

/* Computes the parameters of one band from its envelope(s). */
BandParameters ComputeBandParameters(const BandInput& in);

/* Fits the exponential tail of an envelope whose record ends at endS: a least-squares line
   on the 10 ms-averaged levels over the last 20 dB above the end level (or fewer), setting
   env.tail*. False when there are too few non-zero intervals. */
bool FitTail(EnergyEnvelope& env, double t0, double endS);

// Jackknife helpers StudentT975 and JackknifeStandardError live in zones.h (shared with the
// zone statistics, which consume ParameterValue::leaveOneOut as their replicates).

// ---------------------------------------------------------------------------------------
// Histogram path

struct HistogramMetricsOptions {
    std::vector<int> bands = {1, 2, 3, 4, 5, 6};  // band indices reported (125 Hz - 4 kHz)
    std::optional<Vec3> sourceDirection;  // unit vector seat -> source (default: direct path)
    Vec3 up = Vec3(0, 1, 0);              // internal frame: y up
    SpeechConditions speech;
    bool perBandMti = true;               // add MTI rows (band 125 ... 8000)
    /* Also compute ParameterValue::perBatch (specular + one batch each). The jackknife
       needs only the leave-one-out replicates; off saves 8 of the 17 evaluations. */
    bool perBatchValues = true;
};

/* Reference energy of G in histogram units: unit-energy source, free field, 10 m, no air. */
constexpr double kReferenceEnergy10m = 1.0 / (4.0 * 3.14159265358979323846 * 100.0);

/* All parameters of one (source, receiver) from its specular paths and tracer histogram. */
ParameterTable ParametersFromHistogram(const ReceiverPaths& paths, const ReceiverHistogram& hist,
                                       const HistogramMetricsOptions& options);

/* Adds the single-number rows (kSingleNumbers) computed from the band rows of `table`,
   including per-batch and jackknife replicates when the band rows carry them. Rows already
   present are kept (calling it twice adds nothing; both paths call it already). */
void AddSingleNumbers(ParameterTable& table);

}  // namespace hallwright
