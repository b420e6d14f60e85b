// Auralization: resampling (libsoxr), FFT overlap-add convolution (kissfft) and the level
// policy documented in hallwright/auralize.h.
#include "hallwright/auralize.h"

#include <algorithm>
#include <cmath>
#include <complex>
#include <cstdint>
#include <string>

#include <soxr.h>

#include "response/fft.h"

namespace hallwright {

namespace {

/* Memory guard: at most this many samples (all channels) in any buffer built here (2 GiB of
   float). Longer work is refused with an error instead of exhausting memory. */
constexpr size_t kMaxSamples = size_t(1) << 29;
/* Longest IR convolved (frames): keeps the FFT sizes well inside int (23 min at 48 kHz). */
constexpr size_t kMaxIrFrames = size_t(1) << 26;
/* Smallest overlap-add block (frames): below this the per-block FFT overhead dominates. */
constexpr int kMinBlockFrames = 4096;

std::string Num(double v, int digits = 2) {
    char buf[48];
    std::snprintf(buf, sizeof buf, "%.*f", digits, v);
    return buf;
}

/* Largest |sample|; -1 when a sample is not finite. */
double PeakAbs(const std::vector<float>& samples) {
    double peak = 0;
    for (float v : samples) {
        if (!std::isfinite(v)) return -1;
        peak = std::max(peak, double(std::fabs(v)));
    }
    return peak;
}

/* Shared input checks: non-empty, finite, not silent. `what` names the role in messages. */
bool CheckSignal(const WavData& w, const std::string& path, const char* what, Diagnostics& diag) {
    const SourceLoc at{path, 0, 0, ""};
    if (w.channels < 1 || w.sampleRate < 1 || w.samples.size() % size_t(w.channels) != 0) {
        diag.Error(at, std::string("the ") + what + " has " + std::to_string(w.channels) + " channels at " +
                           std::to_string(w.sampleRate) + " Hz: not a usable audio file");
        return false;
    }
    if (w.FrameCount() == 0) {
        diag.Error(at, std::string("the ") + what + " is empty (no samples): give a file with sound in it");
        return false;
    }
    const double peak = PeakAbs(w.samples);
    if (peak < 0) {
        diag.Error(at, std::string("the ") + what + " contains non-finite samples (NaN or infinity): re-export it");
        return false;
    }
    if (peak == 0) {
        diag.Error(at, std::string("the ") + what + " is silent (every sample is zero): nothing to auralize");
        return false;
    }
    return true;
}

}  // namespace

std::optional<WavData> ResampleTo(const WavData& in, int sampleRate, Diagnostics& diag) {
    const SourceLoc at{};
    if (in.sampleRate < 1 || sampleRate < 1 || in.channels < 1) {
        diag.Error(at, "cannot resample from " + std::to_string(in.sampleRate) + " Hz to " +
                           std::to_string(sampleRate) + " Hz with " + std::to_string(in.channels) +
                           " channels: rates and channel count must be positive");
        return std::nullopt;
    }
    if (in.sampleRate == sampleRate) return in;
    const size_t inFrames = in.FrameCount();
    const double ratio = double(sampleRate) / double(in.sampleRate);
    const double expected = std::ceil(double(inFrames) * ratio);
    if (expected * in.channels > double(kMaxSamples)) {
        diag.Error(at, "resampling " + std::to_string(inFrames) + " frames from " + std::to_string(in.sampleRate) +
                           " Hz to " + std::to_string(sampleRate) +
                           " Hz would need more memory than allowed: use a shorter recording");
        return std::nullopt;
    }
    // High quality (20-bit), linear phase, one thread: the same input gives the same bytes.
    const soxr_io_spec_t io = soxr_io_spec(SOXR_FLOAT32_I, SOXR_FLOAT32_I);
    const soxr_quality_spec_t quality = soxr_quality_spec(SOXR_HQ | SOXR_LINEAR_PHASE, 0);
    const soxr_runtime_spec_t runtime = soxr_runtime_spec(1);
    WavData out;
    out.sampleRate = sampleRate;
    out.channels = in.channels;
    const size_t outCapacity = size_t(expected) + 16;
    out.samples.assign(outCapacity * size_t(in.channels), 0.0f);
    size_t inDone = 0, outDone = 0;
    const soxr_error_t err = soxr_oneshot(double(in.sampleRate), double(sampleRate), unsigned(in.channels),
                                          in.samples.data(), inFrames, &inDone, out.samples.data(),
                                          outCapacity, &outDone, &io, &quality, &runtime);
    if (err) {
        diag.Error(at, "libsoxr cannot resample " + std::to_string(in.sampleRate) + " Hz to " +
                           std::to_string(sampleRate) + " Hz: " + err +
                           " (convert the recording to the IR's rate first)");
        return std::nullopt;
    }
    if (outDone == 0) {
        diag.Error(at, "resampling " + std::to_string(inFrames) + " frames from " + std::to_string(in.sampleRate) +
                           " Hz to " + std::to_string(sampleRate) + " Hz produced no samples: the recording is too short");
        return std::nullopt;
    }
    out.samples.resize(outDone * size_t(in.channels));
    return out;
}

WavData Convolve(const WavData& dry, const WavData& ir) {
    HW_CHECK(dry.channels == 1, "Convolve takes a mono dry signal, got " + std::to_string(dry.channels) + " channels");
    HW_CHECK(ir.channels >= 1 && ir.FrameCount() > 0 && dry.FrameCount() > 0, "Convolve needs non-empty signals");
    const size_t n = dry.FrameCount(), m = ir.FrameCount();
    HW_CHECK(m <= kMaxIrFrames, "IR too long for Convolve: " + std::to_string(m) + " frames");
    const int channels = ir.channels;
    const size_t outFrames = n + m - 1;

    // Block plan: FFT size fftSize holds a block of `block` dry frames plus the IR's tail;
    // a dry signal shorter than one block is done with a single, smaller FFT.
    int fftSize = FastRealFftSize(int(std::max<size_t>(m, kMinBlockFrames) + m - 1));
    int block = fftSize - int(m) + 1;
    if (n <= size_t(block)) {
        fftSize = FastRealFftSize(int(outFrames));
        block = int(n);
    }
    RealFft fft(fftSize);
    const int bins = fft.BinCount();

    // Spectrum of every IR channel (deinterleaved, zero padded).
    std::vector<float> time(fftSize);
    std::vector<std::complex<float>> irSpectra(size_t(bins) * channels), drySpectrum(bins), spectrum(bins);
    for (int c = 0; c < channels; ++c) {
        std::fill(time.begin(), time.end(), 0.0f);
        for (size_t k = 0; k < m; ++k) time[k] = ir.samples[k * channels + c];
        fft.Forward(time.data(), irSpectra.data() + size_t(c) * bins);
    }

    WavData out;
    out.sampleRate = ir.sampleRate;
    out.channels = channels;
    out.samples.assign(outFrames * channels, 0.0f);

    // Overlap-add: each block's full convolution (block + m - 1 frames) is added at its offset.
    for (size_t start = 0; start < n; start += size_t(block)) {
        const size_t len = std::min(size_t(block), n - start);
        std::fill(time.begin(), time.end(), 0.0f);
        std::copy_n(dry.samples.begin() + start, len, time.begin());
        fft.Forward(time.data(), drySpectrum.data());
        const size_t produced = std::min(len + m - 1, outFrames - start);
        for (int c = 0; c < channels; ++c) {
            const std::complex<float>* h = irSpectra.data() + size_t(c) * bins;
            for (int b = 0; b < bins; ++b) spectrum[b] = drySpectrum[b] * h[b];
            fft.Inverse(spectrum.data(), time.data());
            float* dst = out.samples.data() + start * channels + c;
            for (size_t k = 0; k < produced; ++k) dst[k * channels] += time[k];
        }
    }
    return out;
}

AuralizeResult Auralize(const WavData& dry, const WavData& ir, const AuralizeOptions& options,
                        Diagnostics& diag) {
    AuralizeResult result;
    const SourceLoc irAt{options.irPath, 0, 0, ""}, dryAt{options.dryPath, 0, 0, ""};

    // Options and inputs.
    if (!options.keepCalibration && !(std::isfinite(options.peakDbfs) && options.peakDbfs <= 0)) {
        diag.Error({}, "the target peak " + Num(options.peakDbfs) +
                           " dBFS is not allowed: give a finite level at or below 0 dBFS (default -1)");
        return result;
    }
    if (!CheckSignal(ir, options.irPath, "impulse response", diag)) return result;
    if (!CheckSignal(dry, options.dryPath, "dry recording", diag)) return result;
    if (dry.channels > 2) {
        diag.Error(dryAt, "the dry recording has " + std::to_string(dry.channels) +
                              " channels; auralize takes a mono or stereo recording of one source: "
                              "mix it down to mono first");
        return result;
    }
    if (ir.FrameCount() > kMaxIrFrames) {
        diag.Error(irAt, "the impulse response is " + Num(double(ir.FrameCount()) / ir.sampleRate, 1) +
                             " s long, more than auralize handles: trim its silent tail");
        return result;
    }
    result.dryRateIn = dry.sampleRate;
    result.dryChannelsIn = dry.channels;

    // Stereo to mono: one impulse response describes one point source.
    WavData mono;
    mono.sampleRate = dry.sampleRate;
    mono.channels = 1;
    if (dry.channels == 2) {
        mono.samples.resize(dry.FrameCount());
        for (size_t f = 0; f < mono.samples.size(); ++f)
            mono.samples[f] = float(0.5 * (double(dry.At(f, 0)) + double(dry.At(f, 1))));
        result.downmixed = true;
        result.notes.push_back("the stereo dry recording was mixed to mono, (L + R) / 2: a room impulse "
                               "response describes one point source, so the recording plays as one source");
        if (PeakAbs(mono.samples) == 0) {
            diag.Error(dryAt, "the dry recording is silent once mixed to mono (its channels cancel): "
                              "give a mono recording or one channel of it");
            return result;
        }
    } else {
        mono.samples = dry.samples;
    }

    // The dry recording follows the IR's rate, so the IR (the prediction) is never altered.
    if (mono.sampleRate != ir.sampleRate) {
        Diagnostics resampleDiag;
        auto resampled = ResampleTo(mono, ir.sampleRate, resampleDiag);
        for (const Diagnostic& d : resampleDiag.Items())
            diag.Add(d.severity, d.at.file.empty() ? dryAt : d.at, d.message);
        if (!resampled) return result;
        if (PeakAbs(resampled->samples) < 0) {
            diag.Error(dryAt, "resampling produced non-finite samples: convert the recording to " +
                                  std::to_string(ir.sampleRate) + " Hz with another tool first");
            return result;
        }
        mono = std::move(*resampled);
        result.resampled = true;
        result.notes.push_back("the dry recording was resampled from " + std::to_string(dry.sampleRate) + " Hz to " +
                               std::to_string(ir.sampleRate) + " Hz (the IR's rate) with libsoxr, high quality");
    }
    const size_t outFrames = mono.FrameCount() + ir.FrameCount() - 1;
    if (outFrames * size_t(ir.channels) > kMaxSamples) {
        diag.Error(dryAt, "the output would have " + std::to_string(outFrames) + " frames x " +
                              std::to_string(ir.channels) + " channels, more than auralize keeps in memory: "
                              "split the dry recording into shorter parts");
        return result;
    }

    WavData out = Convolve(mono, ir);
    const double peak = PeakAbs(out.samples);
    if (peak < 0) {
        diag.Error(dryAt, "the convolution overflowed (non-finite samples): the inputs' levels are far out of "
                          "range; scale the dry recording or the IR towards full scale");
        return result;
    }
    if (peak == 0) {
        diag.Error(dryAt, "the convolution is silent (its samples underflowed to zero): the inputs' levels are far "
                          "below full scale; scale them up");
        return result;
    }

    // Level policy: normalise to the target peak, or keep the computed level if it fits.
    const double peakDb = 20 * std::log10(peak);
    if (options.keepCalibration) {
        if (peak > 1.0) {
            diag.Error(irAt, "with the calibrated level kept, the output peaks at +" + Num(peakDb) +
                                 " dBFS and would clip: drop --keep-calibration (the output is then "
                                 "normalised), or attenuate the dry recording by at least " + Num(peakDb) +
                                 " dB and account for that offset");
            return result;
        }
        result.gainDb = 0;
        result.peakDbfs = peakDb;
        result.notes.push_back("the calibrated level was kept: samples are the plain convolution sum");
    } else {
        // Each sample scaled in double and rounded once, so the peak lands on the target.
        const double gain = std::pow(10.0, options.peakDbfs / 20) / peak;
        for (float& v : out.samples) v = float(double(v) * gain);
        result.gainDb = 20 * std::log10(gain);
        result.peakDbfs = 20 * std::log10(PeakAbs(out.samples));
        result.notes.push_back("the output was normalised to a peak of " + Num(options.peakDbfs) + " dBFS (gain " +
                               Num(result.gainDb) + " dB): it is not calibrated");
    }
    result.output = std::move(out);
    result.ok = true;
    return result;
}

}  // namespace hallwright
