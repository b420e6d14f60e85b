// Speech transmission index, IEC 60268-16:2011 (ed. 4), from band MTFs.
#include "hallwright/sti.h"

#include <algorithm>
#include <cmath>

namespace hallwright {

namespace {
// Male weights (IEC 60268-16:2011 Table A.3; REFERENCES Part B §6).
constexpr std::array<double, kStiBands> kAlpha = {0.085, 0.127, 0.230, 0.233, 0.309, 0.224, 0.173};
constexpr std::array<double, kStiBands - 1> kBeta = {0.085, 0.078, 0.065, 0.011, 0.047, 0.095};
// Absolute reception threshold, dB (ed. 4 Table A.2, from one transcription; REFERENCES §6).
constexpr std::array<double, kStiBands> kThresholdDb = {46, 27, 12, 6.5, 7.5, 8, 12};
// Male speech spectrum re the A-weighted speech level (ed. 4 Table A.4; REFERENCES §6).
constexpr std::array<double, kStiBands> kMaleSpectrumDb = {2.9, 2.9, -0.8, -6.8, -12.8, -18.8, -24.8};
constexpr double kDefaultSpeechDbA = 60.0;  // ed. 4 default at 1 m (REFERENCES §6, uncertain)

/* Auditory masking slope in dB from the level of the band below (ed. 4, from memory). */
double MaskingDb(double level) {
    if (level < 63) return 0.5 * level - 65;
    if (level < 67) return 1.8 * level - 146.9;
    if (level < 100) return 0.5 * level - 59.8;
    return -10;
}
}  // namespace

Mtf ApplySignalToNoise(const Mtf& mtf, const std::array<double, kStiBands>& snrDb) {
    Mtf m = mtf;
    for (int k = 0; k < kStiBands; ++k)
        for (double& v : m[k]) v /= 1.0 + std::pow(10.0, -snrDb[k] / 10.0);
    return m;
}

double ExponentialMtf(double f, double t) {
    const double x = 2.0 * M_PI * f * t / (6.0 * std::log(10.0));
    return 1.0 / std::sqrt(1.0 + x * x);
}

StiResult ComputeSti(const Mtf& mtf, std::optional<double> speechLevelDbA,
                     const std::optional<std::array<double, kStiBands>>& transferDb,
                     const std::optional<std::array<double, kStiBands>>& noiseDb) {
    StiResult out;
    Mtf m = mtf;
    const bool levels = speechLevelDbA.has_value() || noiseDb.has_value();
    if (levels) {
        // Band levels of speech at the seat; then noise, masking and threshold intensities.
        double speech = kDefaultSpeechDbA;
        if (speechLevelDbA) {
            speech = *speechLevelDbA;
            out.note = "level terms with speech level " + std::to_string(speech).substr(0, 5) +
                       " dB(A) at 1 m";
        } else {
            out.note = "level terms with the default speech level 60 dB(A) at 1 m";
        }
        if (noiseDb) out.note += " and background noise";
        std::array<double, kStiBands> signal{}, total{};
        for (int k = 0; k < kStiBands; ++k) {
            const double transfer = transferDb ? (*transferDb)[k] : 0.0;
            signal[k] = std::pow(10.0, (speech + kMaleSpectrumDb[k] + transfer) / 10.0);
            const double noise = noiseDb ? std::pow(10.0, (*noiseDb)[k] / 10.0) : 0.0;
            total[k] = signal[k] + noise;
        }
        for (int k = 0; k < kStiBands; ++k) {
            const double noise = noiseDb ? std::pow(10.0, (*noiseDb)[k] / 10.0) : 0.0;
            const double masking =
                k == 0 ? 0.0
                       : total[k - 1] * std::pow(10.0, MaskingDb(10.0 * std::log10(total[k - 1])) / 10.0);
            const double threshold = std::pow(10.0, kThresholdDb[k] / 10.0);
            const double factor = signal[k] / (signal[k] + noise + masking + threshold);
            for (double& v : m[k]) v *= factor;
        }
    }
    // Transmission indices per band, then the weighted sum with redundancy terms.
    for (int k = 0; k < kStiBands; ++k) {
        double sum = 0;
        for (int f = 0; f < kModulationCount; ++f) {
            const double mk = std::clamp(m[k][f], 1e-12, 1.0 - 1e-12);
            const double snr = std::clamp(10.0 * std::log10(mk / (1.0 - mk)), -15.0, 15.0);
            sum += (snr + 15.0) / 30.0;
        }
        out.mti[k] = sum / kModulationCount;
    }
    double sti = 0;
    for (int k = 0; k < kStiBands; ++k) sti += kAlpha[k] * out.mti[k];
    for (int k = 0; k < kStiBands - 1; ++k) sti -= kBeta[k] * std::sqrt(out.mti[k] * out.mti[k + 1]);
    out.sti = std::clamp(sti, 0.0, 1.0);
    return out;
}

}  // namespace hallwright
