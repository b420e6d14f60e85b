#pragma once
// Octave bands: the IEC 61260-1 base-ten octaves 63 Hz - 8 kHz. The simulation always runs
// all eight; the scene's `bands` key only selects which are reported.
#include <array>
#include <cmath>
#include <optional>
#include <string>

#include <Eigen/Core>

namespace hallwright {

constexpr int kBandCount = 8;
using Bands = Eigen::Array<double, kBandCount, 1>;

/* Nominal mid-band frequencies (IEC 61260-1 Annex E), used for labels and file columns. */
constexpr std::array<int, kBandCount> kNominalBandHz = {63, 125, 250, 500, 1000, 2000, 4000, 8000};

/* Exact base-ten mid-band frequency 1000 * 10^(k/10) Hz, k = -12, -9, ..., 9 (IEC 61260-1). */
inline double ExactMidbandHz(int band) { return 1000.0 * std::pow(10.0, 0.3 * (band - 4)); }

/* Band edges f1, f2 = fm * 10^(-+0.15) (IEC 61260-1, base ten, one band per octave). */
inline double BandLowerEdgeHz(int band) { return ExactMidbandHz(band) * std::pow(10.0, -0.15); }
inline double BandUpperEdgeHz(int band) { return ExactMidbandHz(band) * std::pow(10.0, 0.15); }

/* Index of a nominal frequency (63, 125, ..., 8000), or nothing. */
inline std::optional<int> BandIndexOfNominal(int hz) {
    for (int b = 0; b < kBandCount; ++b)
        if (kNominalBandHz[b] == hz) return b;
    return std::nullopt;
}

/* Column-style label: 63, 125, 250, 500, 1k, 2k, 4k, 8k. */
inline std::string BandShortLabel(int band) {
    static const char* kLabels[kBandCount] = {"63", "125", "250", "500", "1k", "2k", "4k", "8k"};
    return kLabels[band];
}

inline Bands BandsConstant(double v) { return Bands::Constant(v); }

}  // namespace hallwright

namespace hw = hallwright;
