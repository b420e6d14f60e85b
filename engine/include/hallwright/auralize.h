#pragma once
// Auralization: a dry (anechoic) recording convolved with a predicted or measured impulse
// response, so a design can be heard. The convolution is the plain discrete sum
// y[n] = sum_k x[k] h[n - k] (no 1/fs factor): a unit Dirac as IR returns the dry signal
// unchanged, so a calibrated IR keeps its level relation in the output.
//
// Level policy (never clips silently):
//   - default: the output is scaled so its largest sample is `peakDbfs` (-1 dBFS), and the
//     gain applied is reported; the output is then normalised, not calibrated.
//   - keepCalibration: the samples are left as computed; if any exceeds full scale (|x| > 1)
//     Auralize refuses with an error. It refuses for float output too, because many players
//     clip float samples above full scale at playback; the fix is to drop the option or to
//     attenuate the dry recording and account for the offset.
#include <optional>
#include <string>
#include <vector>

#include "hallwright/diagnostics.h"
#include "hallwright/wav.h"

namespace hallwright {

struct AuralizeOptions {
    bool keepCalibration = false;  // leave the computed samples unscaled (refuse if > 0 dBFS)
    double peakDbfs = -1.0;        // target peak when normalising, dBFS (finite, <= 0)
    /* Paths used only to name the inputs in messages (the engine reads no files here). */
    std::string irPath, dryPath;
};

struct AuralizeResult {
    bool ok = false;         // false: see the errors in Diagnostics; `output` is empty
    WavData output;          // IR's channel count and sample rate
    double gainDb = 0;       // gain applied to the computed convolution (0 with keepCalibration)
    double peakDbfs = 0;     // largest |sample| of `output`, dBFS
    int dryRateIn = 0;       // the dry recording's sample rate as read
    int dryChannelsIn = 0;   // the dry recording's channel count as read (1 or 2)
    bool resampled = false;  // the dry recording was resampled to the IR's rate
    bool downmixed = false;  // a stereo dry recording was mixed to mono, (L + R) / 2
    std::vector<std::string> notes;  // what was done and why, one sentence each
};

/* Resamples every channel of `in` to `sampleRate` with libsoxr (high quality, linear phase,
   one thread: deterministic); nothing and an error when the rates are invalid or soxr fails. */
std::optional<WavData> ResampleTo(const WavData& in, int sampleRate, Diagnostics& diag);

/* Full linear convolution (dry frames + IR frames - 1) of a mono `dry` with every channel of
   `ir` by FFT overlap-add; output has the IR's channels and rate. Both must be non-empty and
   `dry` mono (checked: broken invariants throw via HW_CHECK); the caller downmixes. */
WavData Convolve(const WavData& dry, const WavData& ir);

/* Checks the inputs, mixes a stereo dry recording to mono, resamples the dry recording to
   the IR's rate when they differ, convolves and applies the level policy above. */
AuralizeResult Auralize(const WavData& dry, const WavData& ir, const AuralizeOptions& options,
                        Diagnostics& diag);

}  // namespace hallwright
