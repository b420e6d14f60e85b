#pragma once
// Speech transmission index after IEC 60268-16:2011 (ed. 4) from modulation transfer
// functions (Schroeder 1981: m(F) = |FT of the squared IR| / its energy), male weights.
#include <array>
#include <optional>
#include <string>

#include "hallwright/bands.h"

namespace hallwright {

constexpr int kStiBands = 7;         // 125 Hz ... 8 kHz (band indices 1 ... 7)
constexpr int kModulationCount = 14;
/* Modulation frequencies 0.63 ... 12.5 Hz in 1/3 octaves (IEC 60268-16 A.2.2). */
inline constexpr std::array<double, kModulationCount> kModulationHz = {
    0.63, 0.8, 1.0, 1.25, 1.6, 2.0, 2.5, 3.15, 4.0, 5.0, 6.3, 8.0, 10.0, 12.5};

using Mtf = std::array<std::array<double, kModulationCount>, kStiBands>;

struct StiResult {
    double sti = 0;
    std::array<double, kStiBands> mti{};
    std::string note;  // what the level-dependent terms used, if anything
};

/* STI from the 7 band MTFs (male weights, IEC 60268-16:2011 Table A.3). With a speech level
   (A-weighted, 1 m) the band speech levels at the seat are speechLevel + male spectrum +
   transfer (band energy re 1 m free field, in dB); with noise octave levels (dB at the seat)
   the MTFs get the noise, auditory masking and reception threshold terms (ed. 4 A.2.3-A.2.5,
   from memory). Without either, no level terms (pure room MTF). */
StiResult ComputeSti(const Mtf& mtf, std::optional<double> speechLevelDbA = std::nullopt,
                     const std::optional<std::array<double, kStiBands>>& transferDb = std::nullopt,
                     const std::optional<std::array<double, kStiBands>>& noiseDb = std::nullopt);

/* Stationary noise at the given signal-to-noise ratio per band: m x 1/(1 + 10^(-SNR/10))
   (IEC 60268-16; Houtgast & Steeneken), without masking or threshold terms. */
Mtf ApplySignalToNoise(const Mtf& mtf, const std::array<double, kStiBands>& snrDb);

/* Analytic MTF of an exponential energy decay with reverberation time T (Houtgast & Steeneken):
   m(F) = 1 / sqrt(1 + (2 pi F T / 13.8155)^2). */
double ExponentialMtf(double frequencyHz, double reverberationS);

}  // namespace hallwright
