#pragma once
// WAV path of the parameters: a predicted or measured impulse response, split into octave
// bands (octave_filter.h), each band's noise handled by Lundeby et al. (1995) truncation and
// tail compensation, then the same band-energy computation as the histogram path
// (metrics.h). A noise-free (predicted) response is recognised by its tail that still decays
// and is truncated at its end with the same tail compensation.
//
// Sidecar `<file>.wav.json` (read when present, see wav_sidecar.h): reference_energy for G,
// the channel layout, source/seat names and the source direction.
#include <optional>
#include <string>
#include <vector>

#include "hallwright/diagnostics.h"
#include "hallwright/metrics.h"
#include "hallwright/wav.h"

namespace hallwright {

enum class ChannelLayout { kMono, kAmbix, kBinaural };

struct WavMetricsOptions {
    std::vector<int> bands = {1, 2, 3, 4, 5, 6};  // band indices reported (125 Hz - 4 kHz)
    ChannelLayout layout = ChannelLayout::kMono;
    /* Source azimuth in degrees, counter-clockwise from straight ahead (AmbiX frame), for the
       lateral figure-of-eight of an AmbiX file (0 = source straight ahead). */
    double sourceAzimuthDeg = 0;
    /* Energy sum_n p(n)^2 of the free-field response at 10 m of the same source (white),
       the reference of G (response.h); per band it is scaled by the analysis filter's
       sum_n a_b(n)^2. Empty: no G. */
    std::optional<double> referenceEnergy;
    bool timeReversedFilter = false;  // ISO 3382 allows it for short decays (B T < 16)
    SpeechConditions speech;
    bool perBandMti = true;
    bool sti = true;                  // false: skip STI (and the bands only it needs)
    /* Spacing of the decay-curve points of the least-squares fits (ISO 3382 fits the
       sampled Schroeder curve; 0.5 ms resolves even a 0.1 s decay with 16 points per 10 dB). */
    double decayGridS = 0.0005;
};

/* What the noise analysis found in one band. */
struct BandNoiseAnalysis {
    int band = 0;
    bool noiseFree = false;        // tail still decaying at the end of the file
    bool ok = false;               // false: no usable decay (see note)
    double peakToNoiseDb = 0;      // peak interval level over the noise level (noisy files)
    double crosspointS = 0;        // truncation time (s from the first sample)
    double noiseLevel = 0;         // mean square per sample of the noise (noisy files)
    double lateSlopeDbPerS = 0;    // slope of the late decay used for compensation
    int iterations = 0;
    std::string note;
};

/* Lundeby et al. 1995 on one band's squared IR (REFERENCES Part B §3), from sample `onset`. */
BandNoiseAnalysis AnalyzeNoise(const std::vector<double>& squared, int sampleRate, size_t onset);

/* Time zero: first sample whose square reaches 1/100 of the peak square (ISO 3382-1). */
size_t FindOnsetSample(const std::vector<double>& squared);

/* Interaural cross-correlation coefficient max |IACF(tau)| for |tau| <= 1 ms over samples
   [from, to) (ISO 3382-1 Annex B). */
double Iacc(const std::vector<double>& left, const std::vector<double>& right, int sampleRate,
            size_t from, size_t to);

/* All parameters of one WAV. Noise analysis per band goes to *noise when given. Errors
   (unusable layout, too few channels) go to diag and give an empty table. */
ParameterTable ParametersFromWav(const WavData& wav, const WavMetricsOptions& options,
                                 Diagnostics& diag, std::vector<BandNoiseAnalysis>* noise = nullptr);

}  // namespace hallwright
