// Tests of auralization (engine/response/auralize.cpp): FFT convolution against the discrete
// convolution sum, soxr resampling of a sine, the level policy and the input checks.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <numbers>
#include <random>

#include "hallwright/auralize.h"

namespace hallwright {
namespace {

constexpr double kPi = std::numbers::pi;

WavData RandomSignal(size_t frames, int channels, int rate, uint32_t seed) {
    std::mt19937 rng(seed);
    std::uniform_real_distribution<float> u(-1.0f, 1.0f);
    WavData w;
    w.sampleRate = rate;
    w.channels = channels;
    w.samples.resize(frames * channels);
    for (float& v : w.samples) v = u(rng);
    return w;
}

WavData Sine(double hz, double amplitude, double seconds, int rate) {
    WavData w;
    w.sampleRate = rate;
    w.samples.resize(size_t(std::lround(seconds * rate)));
    for (size_t n = 0; n < w.samples.size(); ++n)
        w.samples[n] = float(amplitude * std::sin(2 * kPi * hz * double(n) / rate));
    return w;
}

/* Discrete convolution by its definition, y_c[n] = sum_k x[k] h_c[n - k], in double. */
std::vector<double> DirectConvolution(const WavData& dry, const WavData& ir) {
    const size_t n = dry.FrameCount(), m = ir.FrameCount();
    const int ch = ir.channels;
    std::vector<double> y((n + m - 1) * ch, 0.0);
    for (size_t k = 0; k < n; ++k)
        for (size_t j = 0; j < m; ++j)
            for (int c = 0; c < ch; ++c) y[(k + j) * ch + c] += double(dry.samples[k]) * double(ir.At(j, c));
    return y;
}

/* max |fft - direct| / max |direct| over all samples. */
double RelativeError(const WavData& fft, const std::vector<double>& direct) {
    EXPECT_EQ(fft.samples.size(), direct.size());
    double err = 0, peak = 0;
    for (size_t i = 0; i < direct.size() && i < fft.samples.size(); ++i) {
        err = std::max(err, std::fabs(double(fft.samples[i]) - direct[i]));
        peak = std::max(peak, std::fabs(direct[i]));
    }
    return err / peak;
}

/* Frequency from linearly interpolated upward zero crossings in [from, to) frames. */
double ZeroCrossingFrequency(const WavData& w, size_t from, size_t to) {
    double first = -1, last = -1;
    int count = 0;
    for (size_t n = from; n + 1 < to; ++n) {
        const double a = w.samples[n], b = w.samples[n + 1];
        if (a < 0 && b >= 0) {
            const double t = (double(n) + a / (a - b)) / w.sampleRate;
            if (first < 0) first = t;
            last = t;
            ++count;
        }
    }
    return count > 1 ? (count - 1) / (last - first) : 0;
}

double Rms(const std::vector<float>& v, size_t from, size_t to) {
    double s = 0;
    for (size_t i = from; i < to; ++i) s += double(v[i]) * v[i];
    return std::sqrt(s / double(to - from));
}

bool HasErrorContaining(const Diagnostics& d, const std::string& text) {
    for (const Diagnostic& x : d.Items())
        if (x.severity == Severity::kError && (x.message.find(text) != std::string::npos ||
                                               x.at.file.find(text) != std::string::npos))
            return true;
    return false;
}

// The FFT result must equal the discrete convolution sum. float FFTs of these sizes round
// at about 1e-7 x log2(size) relative to the peak (kissfft float), so 1e-5 leaves margin
// while a single misplaced block or a wrong overlap (errors of order 1) cannot pass.
TEST(Auralize, ConvolutionEqualsTheDiscreteSum) {
    // Single-FFT case: the dry signal is shorter than one block.
    const WavData dryShort = RandomSignal(1500, 1, 48000, 1), irShort = RandomSignal(400, 1, 48000, 2);
    const WavData y1 = Convolve(dryShort, irShort);
    EXPECT_EQ(y1.FrameCount(), 1500u + 400u - 1);
    EXPECT_EQ(y1.sampleRate, 48000);
    EXPECT_LT(RelativeError(y1, DirectConvolution(dryShort, irShort)), 1e-5);

    // Overlap-add case: several blocks (a block is about 4096 frames here), last one partial.
    const WavData dryLong = RandomSignal(21001, 1, 48000, 3), irLong = RandomSignal(700, 1, 48000, 4);
    const WavData y2 = Convolve(dryLong, irLong);
    EXPECT_EQ(y2.FrameCount(), 21001u + 700u - 1);
    EXPECT_LT(RelativeError(y2, DirectConvolution(dryLong, irLong)), 1e-5);

    // Degenerate lengths: one-frame IR (a gain) and one-frame dry (a copy of the IR).
    WavData gain;
    gain.samples = {0.25f};
    const WavData y3 = Convolve(dryShort, gain);
    ASSERT_EQ(y3.FrameCount(), dryShort.FrameCount());
    for (size_t n = 0; n < y3.FrameCount(); ++n) EXPECT_NEAR(y3.samples[n], 0.25f * dryShort.samples[n], 1e-6);
    WavData impulse;
    impulse.samples = {1.0f};
    const WavData y4 = Convolve(impulse, irShort);
    ASSERT_EQ(y4.FrameCount(), irShort.FrameCount());
    for (size_t n = 0; n < y4.FrameCount(); ++n) EXPECT_NEAR(y4.samples[n], irShort.samples[n], 1e-6);
}

// Each IR channel (binaural L/R, AmbiX W Y Z X) is convolved on its own with the same dry signal.
TEST(Auralize, MultichannelIrConvolvesEveryChannel) {
    const WavData dry = RandomSignal(9000, 1, 48000, 5);
    for (int channels : {2, 4}) {
        const WavData ir = RandomSignal(1300, channels, 48000, 6 + channels);
        const WavData y = Convolve(dry, ir);
        EXPECT_EQ(y.channels, channels);
        EXPECT_EQ(y.FrameCount(), 9000u + 1300u - 1);
        EXPECT_LT(RelativeError(y, DirectConvolution(dry, ir)), 1e-5) << channels << " channels";
    }
}

// Resampling changes the sample rate, not the signal: a 1 kHz sine stays 1 kHz and keeps its
// amplitude (definition of sample-rate conversion; libsoxr HQ is specified to 20-bit accuracy,
// i.e. errors near -120 dB, far below the 0.1 dB amplitude and 0.01 Hz frequency tolerance).
TEST(Auralize, ResamplingKeepsFrequencyAndAmplitude) {
    const double hz = 1000, amplitude = 0.5;
    const WavData in = Sine(hz, amplitude, 1.0, 44100);
    Diagnostics diag;
    auto out = ResampleTo(in, 48000, diag);
    ASSERT_TRUE(out) << diag.ToString();
    EXPECT_EQ(out->sampleRate, 48000);
    EXPECT_EQ(out->channels, 1);
    EXPECT_NEAR(double(out->FrameCount()), 48000.0, 1.0);
    // The middle 0.8 s, away from the filter's edge transients.
    const size_t from = 4800, to = 43200;
    EXPECT_NEAR(ZeroCrossingFrequency(*out, from, to), hz, 0.01);
    const double levelDb = 20 * std::log10(Rms(out->samples, from, to) * std::sqrt(2.0) / amplitude);
    EXPECT_LT(std::fabs(levelDb), 0.1);
    // Linear phase with the filter delay removed: sample n of the output is time n / 48000.
    for (size_t n = from; n < from + 200; ++n)
        EXPECT_NEAR(out->samples[n], amplitude * std::sin(2 * kPi * hz * double(n) / 48000), 1e-3);

    // Same rate: an unchanged copy; invalid rate: an error.
    auto same = ResampleTo(in, 44100, diag);
    ASSERT_TRUE(same);
    EXPECT_EQ(same->samples, in.samples);
    Diagnostics bad;
    EXPECT_FALSE(ResampleTo(in, 0, bad));
    EXPECT_TRUE(bad.HasErrors());
}

// Default policy: the output's largest sample is exactly the target peak, and the reported
// gain is the one that maps the raw convolution's peak onto it (definition of dBFS: 20 log10 |x|).
TEST(Auralize, NormalisesThePeakAndReportsTheGain) {
    const WavData dry = RandomSignal(5000, 1, 48000, 11), ir = RandomSignal(900, 2, 48000, 12);
    const WavData raw = Convolve(dry, ir);
    double rawPeak = 0;
    for (float v : raw.samples) rawPeak = std::max(rawPeak, double(std::fabs(v)));
    for (double target : {-1.0, -6.0}) {
        Diagnostics diag;
        AuralizeOptions opt;
        opt.peakDbfs = target;
        const AuralizeResult r = Auralize(dry, ir, opt, diag);
        ASSERT_TRUE(r.ok) << diag.ToString();
        EXPECT_FALSE(diag.HasErrors());
        double peak = 0;
        for (float v : r.output.samples) peak = std::max(peak, double(std::fabs(v)));
        EXPECT_EQ(float(peak), float(std::pow(10.0, target / 20)));  // one float rounding
        EXPECT_NEAR(r.peakDbfs, target, 1e-6);
        EXPECT_NEAR(r.gainDb, target - 20 * std::log10(rawPeak), 1e-9);
        EXPECT_EQ(r.output.channels, 2);
        EXPECT_EQ(r.output.FrameCount(), raw.FrameCount());
        const double gain = std::pow(10.0, r.gainDb / 20);
        for (size_t i = 0; i < raw.samples.size(); i += 97)
            EXPECT_NEAR(r.output.samples[i], raw.samples[i] * gain, 1e-6);
        EXPECT_FALSE(r.resampled);
        EXPECT_FALSE(r.downmixed);
    }
    // Same inputs, same bytes.
    Diagnostics d1, d2;
    EXPECT_EQ(Auralize(dry, ir, {}, d1).output.samples, Auralize(dry, ir, {}, d2).output.samples);
}

// keepCalibration leaves the convolution sum as it is, and refuses when it exceeds full scale.
TEST(Auralize, KeepCalibrationKeepsLevelOrRefuses) {
    WavData dry = Sine(500, 0.8, 0.1, 48000);
    WavData halfGain;
    halfGain.samples = {0.5f};
    AuralizeOptions keep;
    keep.keepCalibration = true;
    keep.irPath = "hall.wav";
    Diagnostics ok;
    const AuralizeResult r = Auralize(dry, halfGain, keep, ok);
    ASSERT_TRUE(r.ok) << ok.ToString();
    EXPECT_EQ(r.gainDb, 0.0);
    ASSERT_EQ(r.output.samples.size(), dry.samples.size());
    for (size_t n = 0; n < dry.samples.size(); ++n)  // FFT rounding, about 1e-7 of the peak
        EXPECT_NEAR(r.output.samples[n], 0.5f * dry.samples[n], 1e-6);
    EXPECT_NEAR(r.peakDbfs, 20 * std::log10(0.4), 1e-4);

    // Two taps of 1.0 one period apart double the sine: 1.6 > full scale -> refusal naming the fix.
    WavData twoTaps;
    twoTaps.samples.assign(97, 0.0f);  // 96 samples = one period of 500 Hz at 48 kHz: in phase
    twoTaps.samples[0] = 1.0f;
    twoTaps.samples[96] = 1.0f;
    Diagnostics refused;
    const AuralizeResult bad = Auralize(dry, twoTaps, keep, refused);
    EXPECT_FALSE(bad.ok);
    EXPECT_TRUE(bad.output.samples.empty());
    EXPECT_TRUE(HasErrorContaining(refused, "--keep-calibration"));
    EXPECT_TRUE(HasErrorContaining(refused, "hall.wav"));
}

// A stereo recording is one source: (L + R) / 2 goes through the IR, and a note says so.
TEST(Auralize, StereoDryIsMixedToMono) {
    const WavData dry = RandomSignal(3000, 2, 48000, 21);
    WavData dirac;
    dirac.samples = {1.0f};
    AuralizeOptions keep;
    keep.keepCalibration = true;
    Diagnostics diag;
    const AuralizeResult r = Auralize(dry, dirac, keep, diag);
    ASSERT_TRUE(r.ok) << diag.ToString();
    EXPECT_TRUE(r.downmixed);
    EXPECT_EQ(r.dryChannelsIn, 2);
    ASSERT_EQ(r.output.FrameCount(), 3000u);
    for (size_t f = 0; f < 3000; ++f)
        EXPECT_NEAR(r.output.samples[f], 0.5 * (dry.At(f, 0) + dry.At(f, 1)), 1e-6);
    bool noted = false;
    for (const std::string& n : r.notes) noted = noted || n.find("one point source") != std::string::npos;
    EXPECT_TRUE(noted);
}

// A dry recording at another rate is resampled to the IR's rate; the IR is left alone.
TEST(Auralize, DryFollowsTheIrSampleRate) {
    const WavData dry = Sine(440, 0.5, 0.5, 22050);
    WavData ir = RandomSignal(2400, 2, 48000, 31);
    Diagnostics diag;
    const AuralizeResult r = Auralize(dry, ir, {}, diag);
    ASSERT_TRUE(r.ok) << diag.ToString();
    EXPECT_TRUE(r.resampled);
    EXPECT_EQ(r.dryRateIn, 22050);
    EXPECT_EQ(r.output.sampleRate, 48000);
    EXPECT_NEAR(double(r.output.FrameCount()), 24000.0 + 2400 - 1, 1.0);
}

// Bad inputs give an error naming the file and produce no output, never NaN.
TEST(Auralize, RejectsBadInputs) {
    const WavData good = RandomSignal(1000, 1, 48000, 41), ir = RandomSignal(200, 2, 48000, 42);
    AuralizeOptions opt;
    opt.irPath = "room.wav";
    opt.dryPath = "voice.wav";
    auto fails = [&](const WavData& dry, const WavData& h, const AuralizeOptions& o, const std::string& text) {
        Diagnostics d;
        const AuralizeResult r = Auralize(dry, h, o, d);
        EXPECT_FALSE(r.ok) << text;
        EXPECT_TRUE(r.output.samples.empty()) << text;
        EXPECT_TRUE(HasErrorContaining(d, text)) << "expected \"" << text << "\" in\n" << d.ToString();
    };
    WavData empty;
    fails(empty, ir, opt, "voice.wav");
    fails(empty, ir, opt, "empty");
    WavData silentIr = ir;
    std::fill(silentIr.samples.begin(), silentIr.samples.end(), 0.0f);
    fails(good, silentIr, opt, "room.wav");
    fails(good, silentIr, opt, "silent");
    WavData nan = good;
    nan.samples[17] = std::nanf("");
    fails(nan, ir, opt, "non-finite");
    WavData inf = ir;
    inf.samples[3] = INFINITY;
    fails(good, inf, opt, "room.wav");
    const WavData threeChannels = RandomSignal(500, 3, 48000, 43);
    fails(threeChannels, ir, opt, "3 channels");
    fails(threeChannels, ir, opt, "voice.wav");
    WavData cancelling = RandomSignal(500, 2, 48000, 44);
    for (size_t f = 0; f < 500; ++f) cancelling.samples[2 * f + 1] = -cancelling.samples[2 * f];
    fails(cancelling, ir, opt, "cancel");
    AuralizeOptions loud = opt;
    loud.peakDbfs = 3;
    fails(good, ir, loud, "0 dBFS");
    loud.peakDbfs = std::nan("");
    fails(good, ir, loud, "dBFS");
    // Overflow of the float convolution is an error, not infinities in the output.
    WavData huge = good;
    for (float& v : huge.samples) v *= 3e38f;
    fails(huge, ir, opt, "overflow");
}

}  // namespace
}  // namespace hallwright
