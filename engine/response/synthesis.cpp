// Impulse-response synthesis: specular pulses + band-weighted Poisson Dirac sequence.
// Conventions and the filter bank are documented in hallwright/response.h.
#include "hallwright/response.h"

#include <algorithm>
#include <cmath>
#include <array>
#include <complex>
#include <memory>
#include <mutex>
#include <numeric>
#include <numbers>
#include <string>

#include <pcg_random.hpp>
#include <tbb/parallel_for.h>

#include "response/fft.h"
#include "response/synthesis_internal.h"

namespace hallwright {

namespace {

constexpr double kPi = std::numbers::pi;
/* Zero padding on each side of the IR inside the FFT buffer: room for the pre-ringing of the
   zero-phase bank (wraps to the buffer end) and the ring-out past the IR end. A kernel of
   half-length L stays clear of the IR when L <= 2 x pad (the pre-ringing of the earliest
   Dirac wraps into the end padding, the ring-out of the last fills it), and the 63/125 Hz
   crossover kernel (20 Hz wide transition) has decayed by far more than 100 dB after 150 ms. */
constexpr double kPadS = 0.075;
/* The specular grid is short, so it affords a longer padding: the 63 Hz band's kernel tail
   still moves the group delay by a few 1/100 sample between 150 and 300 ms. */
constexpr double kSpecularPadS = 0.30;
/* Kaiser window parameter of the fractional-delay kernel (about 80 dB side-lobe rejection). */
constexpr double kKaiserBeta = 8.0;
/* Length of the energy-correction window per band, in periods of the bandwidth: a band of
   bandwidth B cannot hold an independent energy per interval shorter than ~1/B. */
constexpr double kCorrectionBandwidthPeriods = 8.0;
constexpr double kMinCorrectionWindowS = 0.002;
/* The second, slow correction stage: 16 periods of the bandwidth, at least 10 ms. */
constexpr double kLongCorrectionPeriods = 16.0;
constexpr double kMinLongCorrectionWindowS = 0.010;
/* Longest IR accepted (memory guard: 8 band buffers of this length are held at once). */
constexpr double kMaxLengthS = 120.0;

uint64_t Mix64(uint64_t x) {
    // SplitMix64 finaliser (Steele, Lea, Flood 2014), used as a hash.
    x += 0x9E3779B97F4A7C15ull;
    x = (x ^ (x >> 30)) * 0xBF58476D1CE4E5B9ull;
    x = (x ^ (x >> 27)) * 0x94D049BB133111EBull;
    return x ^ (x >> 31);
}

/* The Dirac-sequence stream of one (source, receiver): depends on nothing else. */
pcg32 SequenceRng(uint64_t seed, int source, int receiver) {
    const uint64_t key = (static_cast<uint64_t>(static_cast<uint32_t>(source)) << 32) |
                         static_cast<uint32_t>(receiver);
    return pcg32(Mix64(seed ^ Mix64(key)), Mix64(seed + 0x5EEDull) ^ key);
}

/* Uniform double in [0, 1) with 53 random bits. */
double Uniform(pcg32& rng) {
    const uint64_t hi = rng() >> 5, lo = rng() >> 6;  // 27 + 26 bits
    return (static_cast<double>(hi) * 67108864.0 + static_cast<double>(lo)) * (1.0 / 9007199254740992.0);
}

double CrossoverHz(int k) { return BandUpperEdgeHz(k); }

/* Rising half of crossover k: 0 below fc 2^-w, 1 above fc 2^w, and between them
   (1 + sin(pi/2 sin(pi u/2)))/2 with u = log2(f/fc)/w: odd about the crossover, so the
   falling half (its complement) mirrors it, and flat to the third derivative at u = +-1, so
   the band kernels decay fast in time (short pre-ringing). */
double UpperShare(double f, int k) {
    if (f <= 0) return 0;
    const double u = std::log2(f / CrossoverHz(k)) / kCrossoverHalfWidthOct;
    if (u <= -1) return 0;
    if (u >= 1) return 1;
    return 0.5 * (1.0 + std::sin(0.5 * kPi * std::sin(0.5 * kPi * u)));
}

double BesselI0(double x) {
    // Power series; converges fast for the arguments used here (x <= ~10).
    double sum = 1, term = 1;
    const double q = 0.25 * x * x;
    for (int k = 1; k < 60; ++k) {
        term *= q / (static_cast<double>(k) * k);
        sum += term;
        if (term < 1e-17 * sum) break;
    }
    return sum;
}

/* Windowed-sinc fractional-delay tap at offset x (samples) from the exact delay. */
double FractionalDelayTap(double x, double i0Beta) {
    const double k = kFractionalDelayHalfTaps;
    if (std::fabs(x) >= k) return 0;
    const double r = x / k;
    const double window = BesselI0(kKaiserBeta * std::sqrt(1.0 - r * r)) / i0Beta;
    const double sinc = std::fabs(x) < 1e-12 ? 1.0 : std::sin(kPi * x) / (kPi * x);
    return sinc * window;
}

/* Running mean over a centred box of `width` samples (sliding sum, double precision). */
void BoxSmooth(const std::vector<double>& in, int width, std::vector<double>& out) {
    const int n = static_cast<int>(in.size());
    out.resize(n);
    const int half = width / 2;
    const double inv = 1.0 / width;
    // Window of sample i: [i - half, i - half + width), clipped to the signal.
    double sum = 0;
    for (int j = 0; j < std::min(n, width - half); ++j) sum += in[j];
    // The same sliding sum as one loop with both bounds checked, split at the two edges.
    const int dropFrom = std::min(n, half), addTo = std::max(dropFrom, n - width + half);
    int i = 0;
    for (; i < dropFrom; ++i) {
        out[i] = sum * inv;
        if (i - half + width < n) sum += in[i - half + width];
    }
    for (; i < addTo; ++i) {
        out[i] = sum * inv;
        sum += in[i - half + width];
        sum -= in[i - half];
    }
    for (; i < n; ++i) {
        out[i] = sum * inv;
        if (i - half + width < n) sum += in[i - half + width];
        sum -= in[i - half];
    }
}

/* The quadrature (Hilbert) part of a rotated reflection is faded in between these
   frequencies: zero at DC, whole from 40 Hz on (below the 63 Hz band's lower edge, 44 Hz).
   A wide fade keeps its time response short (the phase ramp it makes moves the 63 Hz group
   delay by ~2/100 sample; a 10-30 Hz fade moved it twice as far)... */
constexpr double kQuadratureZeroHz = 4.0;
constexpr double kQuadratureFullHz = 40.0;
/* ... and faded out again over the last 10 % below Nyquist (above every analysis band), so
   that its spectrum has no step at either end and its time response stays compact. */
constexpr double kQuadratureTopShare = 0.9;

/* Reflection phase of path `index` of one (source, receiver): uniform in [0, 2 pi), from a
   stream that depends on nothing else, so every channel of the seat gets the same phase. */
double ReflectionPhase(const SynthesisContext& ctx, size_t index) {
    const uint64_t key = Mix64(Mix64(ctx.seed ^ 0x9A5E0F1Cull) ^
                               ((static_cast<uint64_t>(static_cast<uint32_t>(ctx.source)) << 32) |
                                static_cast<uint32_t>(ctx.receiver)));
    const uint64_t bits = Mix64(key ^ Mix64(static_cast<uint64_t>(index) + 1));
    return 2.0 * kPi * static_cast<double>(bits >> 11) * (1.0 / 9007199254740992.0);
}

/* Phases of the specular paths (response.h, coherentReflections): 0 for the direct sound
   (and for every path when coherent), else ReflectionPhase. */
std::vector<double> ReflectionPhases(const ReceiverPaths& paths, const SynthesisContext& ctx) {
    std::vector<double> phase(paths.paths.size(), 0.0);
    if (ctx.coherentReflections) return phase;
    for (size_t i = 0; i < phase.size(); ++i)
        if (paths.paths[i].order > 0) phase[i] = ReflectionPhase(ctx, i);
    return phase;
}

/* Validates the inputs; false with an error naming the problem. */
bool Validate(const ReceiverPaths& paths, const ReceiverHistogram& hist,
              const SynthesisContext& ctx, Diagnostics& diag) {
    const SourceLoc at{"", 0, 0,
                       "synthesis of source " + std::to_string(ctx.source) + ", receiver " +
                           std::to_string(ctx.receiver)};
    bool ok = true;
    auto fail = [&](const std::string& msg) {
        diag.Error(at, msg);
        ok = false;
    };
    if (ctx.sampleRate < kMinSampleRate || ctx.sampleRate > 768000)
        fail("sample rate " + std::to_string(ctx.sampleRate) + " Hz is outside " +
             std::to_string(kMinSampleRate) + "..768000 Hz; the 8 kHz band needs at least " +
             std::to_string(kMinSampleRate) + " Hz (set settings.sample_rate)");
    if (!(ctx.roomVolumeM3 > 0) || !std::isfinite(ctx.roomVolumeM3))
        fail("room volume must be positive to set the reflection density (got " +
             std::to_string(ctx.roomVolumeM3) + " m^3; is the model closed?)");
    if (!(ctx.speedOfSound > 0) || !std::isfinite(ctx.speedOfSound))
        fail("speed of sound must be positive");
    if (!(ctx.maxReflectionDensity > 0) || !std::isfinite(ctx.maxReflectionDensity))
        fail("maximum reflection density must be positive");
    if (!std::isfinite(ctx.lengthS) || ctx.lengthS < 0 || ctx.lengthS > kMaxLengthS)
        fail("IR length " + std::to_string(ctx.lengthS) + " s is outside 0.." +
             std::to_string(kMaxLengthS) + " s");
    if (hist.binCount < 0 ||
        hist.energy.size() != static_cast<size_t>(kBatchCount) * hist.binCount * kBandCount)
        fail("histogram holds " + std::to_string(hist.energy.size()) + " values, expected " +
             std::to_string(kBatchCount) + " x " + std::to_string(hist.binCount) + " x " +
             std::to_string(kBandCount));
    else
        for (float e : hist.energy)
            if (!std::isfinite(e) || e < 0) {
                fail("histogram holds a negative or non-finite energy");
                break;
            }
    for (const SpecularPath& p : paths.paths) {
        if (!std::isfinite(p.delayS) || p.delayS < 0 || !p.energy.isFinite().all() ||
            (p.energy < 0).any()) {
            fail("a specular path has a negative or non-finite delay or energy");
            break;
        }
    }
    return ok;
}

/* The late part: Poisson Dirac sequence weighted per band to the mean histogram, band
   filtered, energy-corrected on each band's own time scale; added into `out` (size nOut). */
/* Channel gains of one arrival direction: mono {1}, or AmbiX W, Y, Z, X in the head frame. */
struct Encoder {
    int channels = 1;
    Vec3 front = Vec3::UnitX(), left = Vec3::UnitZ(), up = Vec3::UnitY();  // head frame
    void Gains(const Vec3& dirInternal, float* g) const {
        g[0] = 1.0f;
        if (channels == 1) return;
        // ACN 1, 2, 3 = Y, Z, X; SN3D first order: sin(az) cos(el), sin(el), cos(az) cos(el)
        // (AmbiX, Nachbar et al. 2011), which are the head-frame coordinates of the unit
        // direction.
        g[1] = static_cast<float>(dirInternal.dot(left));
        g[2] = static_cast<float>(dirInternal.dot(up));
        g[3] = static_cast<float>(dirInternal.dot(front));
    }
};

/* An arrival direction for a Dirac at time t: a cell of the tracer's directional record
   drawn in proportion to its energy in t's 10 ms bin, then a uniform direction inside the
   cell (uniform azimuth in the sector, uniform d.y in the band: equal area); isotropic
   where the record holds nothing. Cells as in DirectionCell (propagation.h). */
Vec3 DrawArrival(const ReceiverHistogram& hist, double t, pcg32& rng) {
    const int coarse = static_cast<int>(t / kDirectionBinS);
    int cell = -1;
    const size_t base = static_cast<size_t>(coarse) * kDirectionCells;
    if (coarse >= 0 && base + kDirectionCells <= hist.directionEnergy.size()) {
        double sum = 0;
        for (int c = 0; c < kDirectionCells; ++c) sum += std::max(0.0f, hist.directionEnergy[base + c]);
        if (sum > 0) {
            double u = Uniform(rng) * sum;
            for (int c = 0; c < kDirectionCells; ++c) {
                u -= std::max(0.0f, hist.directionEnergy[base + c]);
                if (u < 0 || c == kDirectionCells - 1) {
                    cell = c;
                    break;
                }
            }
        }
    }
    double phi, dy;
    if (cell < 0) {
        phi = -kPi + 2 * kPi * Uniform(rng);
        dy = -1 + 2 * Uniform(rng);
    } else {
        phi = -kPi + (cell % 8 + Uniform(rng)) * (2 * kPi / 8);
        dy = -1 + (cell / 8 + Uniform(rng)) * (2.0 / 8);
    }
    const double rxy = std::sqrt(std::max(0.0, 1 - dy * dy));
    return Vec3(rxy * std::cos(phi), dy, rxy * std::sin(phi));  // atan2(z, x) = phi
}

/* The late part on decimated grids. Band b's bank magnitude is zero above its upper
   crossover edge top_b = fc_b 2^w, so the band's signal is exactly representable on a grid of
   step R_b samples whenever fs / (2 R_b) > top_b. Each band is therefore synthesised on its
   own grid of M / R_b points (M the full grid): the Dirac train is brought onto it by a
   Kaiser-windowed-sinc decimation kernel (flat to ~1e-3 up to top_b, -60 dB from
   fs / R_b - top_b on, so nothing aliases into the band), band filtered there by the same
   zero-phase magnitudes, energy-corrected there (the correction varies on the band's time
   scale 8/B, far slower than the grid step), and its spectrum is placed into the full grid's
   spectrum: one full-size inverse FFT then gives the sum of the decimated bands at the full
   rate (exact band-limited interpolation). The top band, which reaches Nyquist, stays on the
   full grid. */
constexpr double kDecimationMargin = 1.25;   // fs / (2 R) >= margin * top_b
/* Kernel stop-band rejection: 60 dB for the late part (noise whose band energies are
   checked to 0.2 dB: an alias at -60 dB adds 1e-6 of the energy, the pass-band ripple of
   ~1e-3 moves it by < 0.01 dB), 120 dB for the specular part, whose group delay must hold
   to 1/100 sample (a -80 dB alias moves it by a few 1/100 at 63-500 Hz). */
constexpr double kLateStopDb = 60.0;
constexpr double kSpecularStopDb = 120.0;
constexpr double kInterpolationStopDb = 80.0;

struct DecimatedBand {
    int decimation = 1;         // R: grid step in full-rate samples
    int size = 0;               // M / R points
    int halfTaps = 0;           // H: grid points on each side of a Dirac
    std::vector<float> kernel;  // [phase r][tap j], value at offset (j - H + 1) R - r samples
    int sharpHalfTaps = 0;      // the same for the specular part's sharper kernel
    std::vector<float> sharpKernel;
    std::vector<float> mag;     // bank magnitude on bins 0 .. size / 2 (same frequencies as the full grid)
};

struct LateGrid {
    int size = 0, sampleRate = 0;
    Bands eps = Bands::Zero();  // eps_b on the full grid: sum_n h_b(n)^2
    std::array<DecimatedBand, kBandCount> bands;
    /* 1 - |H_top|, the sum of the lower bands, on the grid of the band below the top one
       (empty when that band is not decimated): see the top band in AddLatePart. */
    std::vector<float> complementMag;
    /* Band-limited interpolation from the grid below to the full rate (used when every lower
       band's grid is coarser, so its bins are a subset of that grid's): the decimation kernel
       of the band below at 80 dB, so the late part's sum is formed on that grid and never on
       the full one. */
    bool coarseSum = false;
    int interpHalfTaps = 0;
    std::vector<float> interpKernel;
};

/* Grid step of band b's late part: the largest 3 * 2^k with fs / (2 R) >= margin * top_b; the
   top band (up to Nyquist) and bands too close to Nyquist stay at R = 1. */
int LateDecimation(int band, int sampleRate) {
    if (band == kBandCount - 1) return 1;
    const double top = CrossoverHz(band) * std::exp2(kCrossoverHalfWidthOct);
    int best = 1;
    // Candidates 2, 3, 4, 6, 8, 12, ...: the condition holds up to some step, then never.
    for (int k = 1; k < 24; ++k) {
        const int r = (k % 2) ? (1 << ((k + 1) / 2)) : 3 * (1 << ((k - 2) / 2));
        if (sampleRate / (2.0 * r) < kDecimationMargin * top) break;
        best = r;
    }
    return best;
}

/* Step that every band's grid divides (their least common multiple). */
int LateGridStep(int sampleRate) {
    int step = 1;
    for (int b = 0; b < kBandCount; ++b) step = std::lcm(step, LateDecimation(b, sampleRate));
    return step;
}

/* Smallest n' >= n whose factors are 2, 3 and 5 only. */
int SmoothAtLeast(int n) {
    for (int m = std::max(1, n);; ++m) {
        int r = m;
        for (int p : {2, 3, 5})
            while (r % p == 0) r /= p;
        if (r == 1) return m;
    }
}

/* Full grid of at least `need` points on which every band's step divides evenly (and leaves
   an even number of points for the real FFT). */
int LateGridSize(int need, int sampleRate) {
    const int unit = 2 * LateGridStep(sampleRate);
    return unit * SmoothAtLeast((need + unit - 1) / unit);
}

/* Grid of the specular part: at least `need` points, rounded up to c 2^k (c = 16, 18, 20,
   24, 27, 30: at most 20 % more) times the late grids' unit, so that seats share grids. */
int SpecularGridSize(int need, int sampleRate) {
    const int unit = 2 * LateGridStep(sampleRate);
    const int q = (need + unit - 1) / unit;
    int best = SmoothAtLeast(q);
    if (q > 16) {
        best = 0;
        for (int c : {16, 18, 20, 24, 27, 30}) {
            long v = c;
            while (v < q) v *= 2;
            if (best == 0 || v < best) best = static_cast<int>(v);
        }
    }
    return unit * best;
}

/* Decimation kernel for step r: ideal low-pass to fs/(2r) (sinc(x/r)/r, unit pass-band gain)
   under a Kaiser window; N = (A - 8) / (2.285 dw) taps and beta = 0.1102 (A - 8.7) for a
   rejection of A dB over a transition of dw rad/sample, here from top to fs/r - top (Kaiser
   1974, from memory of Oppenheim & Schafer, Discrete-Time Signal Processing). */
void MakeDecimationKernel(int r, double top, double fs, double stopDb, int& halfTaps, std::vector<float>& kernel) {
    const double beta = 0.1102 * (stopDb - 8.7);
    const double i0Beta = BesselI0(beta);
    const double dw = 2.0 * kPi * (fs / r - 2.0 * top) / fs;
    const double taps = (stopDb - 8.0) / (2.285 * dw);
    halfTaps = static_cast<int>(std::ceil(taps / (2.0 * r))) + 1;
    const int h = halfTaps;
    kernel.assign(static_cast<size_t>(r) * 2 * h, 0.0f);
    for (int phase = 0; phase < r; ++phase)
        for (int j = 0; j < 2 * h; ++j) {
            const double x = static_cast<double>((j - h + 1) * r - phase);
            const double u = x / (static_cast<double>(h) * r);
            if (std::fabs(u) >= 1) continue;
            const double window = BesselI0(beta * std::sqrt(1.0 - u * u)) / i0Beta;
            const double s = x == 0 ? 1.0 : std::sin(kPi * x / r) / (kPi * x / r);
            kernel[static_cast<size_t>(phase) * 2 * h + j] = static_cast<float>(s * window / r);
        }
}

std::shared_ptr<const LateGrid> MakeLateGrid(int m, int sampleRate) {
    auto grid = std::make_shared<LateGrid>();
    grid->size = m;
    grid->sampleRate = sampleRate;
    const double fs = sampleRate;
    const int nBins = m / 2 + 1;
    for (int b = 0; b < kBandCount; ++b) {
        double sum = 0;
        DecimatedBand& db = grid->bands[b];
        db.decimation = LateDecimation(b, sampleRate);
        db.size = m / db.decimation;
        db.mag.assign(db.size / 2 + 1, 0.0f);
        for (int i = 0; i < nBins; ++i) {
            const double mag = SynthesisBandMagnitude(b, static_cast<double>(i) * fs / m);
            if (i < static_cast<int>(db.mag.size())) db.mag[i] = static_cast<float>(mag);
            sum += ((i == 0 || i == nBins - 1) ? 1.0 : 2.0) * mag * mag;  // Parseval, real spectrum
        }
        grid->eps[b] = sum / m;
        const int r = db.decimation;
        if (r == 1) continue;
        const double top = CrossoverHz(b) * std::exp2(kCrossoverHalfWidthOct);
        MakeDecimationKernel(r, top, fs, kLateStopDb, db.halfTaps, db.kernel);
        MakeDecimationKernel(r, top, fs, kSpecularStopDb, db.sharpHalfTaps, db.sharpKernel);
    }
    const DecimatedBand& below = grid->bands[kBandCount - 2];
    if (below.decimation > 1) {
        const double top = CrossoverHz(kBandCount - 2) * std::exp2(kCrossoverHalfWidthOct);
        MakeDecimationKernel(below.decimation, top, fs, kInterpolationStopDb, grid->interpHalfTaps,
                             grid->interpKernel);
        grid->coarseSum = true;
        for (int b = 0; b < kBandCount - 2; ++b)
            grid->coarseSum = grid->coarseSum && grid->bands[b].decimation > below.decimation;
        grid->complementMag.resize(below.mag.size());
        for (size_t i = 0; i < below.mag.size(); ++i)
            grid->complementMag[i] = static_cast<float>(
                1.0 - SynthesisBandMagnitude(kBandCount - 1, static_cast<double>(i) * fs / m));
    }
    return grid;
}

/* Late grids are the same for every seat of a run: keep the few most recent ones. */
std::shared_ptr<const LateGrid> LateGridFor(int m, int sampleRate) {
    static std::mutex mutex;
    static std::vector<std::shared_ptr<const LateGrid>> cache;
    {
        std::lock_guard<std::mutex> lock(mutex);
        for (const auto& g : cache)
            if (g->size == m && g->sampleRate == sampleRate) return g;
    }
    auto grid = MakeLateGrid(m, sampleRate);
    std::lock_guard<std::mutex> lock(mutex);
    if (cache.size() >= 12) cache.erase(cache.begin());
    cache.push_back(grid);
    return grid;
}

/* Band-limited interpolation of a grid signal y (step r) to the full rate: its spectrum,
   times r, added into the full grid's spectrum `full` (the grid's Nyquist bin split in half
   between its two images). */
void EmbedGridSpectrum(RealFft& fft, std::vector<float>& y, double r, std::vector<std::complex<float>>& spectrum,
                       std::vector<std::complex<float>>& full) {
    const int nBins = fft.BinCount();
    spectrum.resize(nBins);
    fft.Forward(y.data(), spectrum.data());
    const float scale = static_cast<float>(r);
    for (int i = 0; i < nBins - 1; ++i) full[i] += scale * spectrum[i];
    full[nBins - 1] += 0.5f * scale * spectrum[nBins - 1];
}

/* Buffers of the late part, kept per thread so that a run does not allocate (and page in)
   megabytes per seat. */
struct LateWorkspace {
    std::vector<std::vector<float>> u, d, full;
    std::vector<std::vector<std::complex<float>>> spectra;
    std::vector<std::complex<float>> spectrum;
    std::vector<double> mean, upperShare;
    std::vector<int> eventSample, binEvents, at, binOf, lowerBin, upperBin;
    std::vector<char> binHasEnergy;
    std::vector<float> eventSign, weight;
    std::vector<std::array<float, 4>> eventGain;
    std::vector<size_t> order;
    std::vector<double> target, actual, actualC, targetB, actualB, targetS, actualS, tmp, gain;
    std::vector<double> weighted, gainLong;
    std::vector<float> y, xb, interp;
    std::vector<std::vector<float>> shared;  // the grid shared by the top band and the one below
};

/* Energy-correction gain sqrt(S(target) / S(actual)) per point (n = target.size() points):
   S is a triangular window of 2 x `width` points (two box passes), evaluated on blocks of
   `block` points and interpolated linearly between block centres; clamped to
   [1/limit, limit], 1 where either side is empty. */
void SmoothedRatioGain(const std::vector<double>& target, const std::vector<double>& actual, int block, int width,
                       double limit, LateWorkspace& ws, std::vector<double>& out) {
    const int n = static_cast<int>(target.size());
    const int blocks = (n + block - 1) / block;
    const int widthB = block == 1 ? width : std::max(3, static_cast<int>(std::lround(static_cast<double>(width) / block)));
    if (block > 1) {
        ws.targetB.assign(blocks, 0.0);
        ws.actualB.assign(blocks, 0.0);
        for (int k = 0, i = 0; k < blocks; ++k) {
            double t = 0, a = 0;
            for (const int end = std::min(n, i + block); i < end; ++i) t += target[i], a += actual[i];
            ws.targetB[k] = t;
            ws.actualB[k] = a;
        }
    }
    BoxSmooth(block == 1 ? target : ws.targetB, widthB, ws.tmp);
    BoxSmooth(ws.tmp, widthB, ws.targetS);
    BoxSmooth(block == 1 ? actual : ws.actualB, widthB, ws.tmp);
    BoxSmooth(ws.tmp, widthB, ws.actualS);
    for (int k = 0; k < blocks; ++k) {
        double g = 1.0;
        if (ws.actualS[k] > 1e-300 && ws.targetS[k] > 1e-300)
            g = std::clamp(std::sqrt(ws.targetS[k] / ws.actualS[k]), 1.0 / limit, limit);
        ws.tmp[k] = g;
    }
    out.resize(n);
    if (block == 1) {
        std::copy(ws.tmp.begin(), ws.tmp.begin() + n, out.begin());
        return;
    }
    // Between the centres of blocks k and k + 1 (at k block + (block - 1) / 2), the gain runs
    // linearly from g_k to g_k+1; before the first and after the last centre it stays flat.
    const double centre = 0.5 * (block - 1), inv = 1.0 / block;
    const int first = std::min(n, static_cast<int>(std::ceil(centre)));
    for (int i = 0; i < first; ++i) out[i] = ws.tmp[0];
    for (int k = 0, i = first; i < n; ++k) {
        const double g0 = ws.tmp[std::min(k, blocks - 1)], g1 = ws.tmp[std::min(k + 1, blocks - 1)];
        const double start = centre + static_cast<double>(k) * block;
        for (const int end = std::min(n, static_cast<int>(std::ceil(start + block))); i < end; ++i)
            out[i] = g0 + (static_cast<double>(i) - start) * inv * (g1 - g0);
    }
}

void AddLatePart(const ReceiverHistogram& hist, const SynthesisContext& ctx, int nOut,
                 const LateGrid& grid, const Encoder& enc, std::vector<std::vector<float>>& outs) {
    const int channels = enc.channels;
    const Bands& eps = grid.eps;
    const int m = grid.size;
    const double fs = ctx.sampleRate;
    const double samplesPerBin = fs * kBinWidthS;
    // Only bins that start inside the IR are synthesized.
    const int binCount = std::min(hist.binCount, static_cast<int>(std::ceil(nOut / samplesPerBin)));
    if (binCount <= 0) return;

    thread_local LateWorkspace ws;
    // Mean over batches = the all-ray estimate (propagation.h).
    std::vector<double>& mean = ws.mean;
    mean.assign(static_cast<size_t>(binCount) * kBandCount, 0.0);
    for (int batch = 0; batch < kBatchCount; ++batch)
        for (int k = 0; k < binCount; ++k)
            for (int b = 0; b < kBandCount; ++b)
                mean[k * kBandCount + b] += hist.Energy(batch, k, b) / kBatchCount;
    std::vector<char>& binHasEnergy = ws.binHasEnergy;
    binHasEnergy.assign(binCount, 0);
    int kFirst = -1, kLast = -1;
    for (int k = 0; k < binCount; ++k)
        for (int b = 0; b < kBandCount; ++b)
            if (mean[k * kBandCount + b] > 0) {
                binHasEnergy[k] = 1;
                if (kFirst < 0) kFirst = k;
                kLast = k;
            }
    if (kFirst < 0) return;

    // Dirac times: Poisson process of rate mu(t) = min(4 pi c^3 t^2 / V, muMax) (Kuttruff,
    // Room Acoustics ch. 4; Schroeder 1996 eq. 11; REFERENCES Part B 5.1), drawn exactly by
    // inverting the cumulative rate Lambda(t) at unit-rate exponential steps.
    pcg32 rng = SequenceRng(ctx.seed, ctx.source, ctx.receiver);
    const double c = ctx.speedOfSound;
    const double a = 4.0 * kPi * c * c * c / ctx.roomVolumeM3;  // mu = a t^2
    const double muMax = ctx.maxReflectionDensity;
    const double tCap = std::sqrt(muMax / a);
    const double lambdaCap = a * tCap * tCap * tCap / 3.0;
    auto cumulative = [&](double t) {
        return t <= tCap ? a * t * t * t / 3.0 : lambdaCap + muMax * (t - tCap);
    };
    auto inverse = [&](double lambda) {
        return lambda <= lambdaCap ? std::cbrt(3.0 * lambda / a) : tCap + (lambda - lambdaCap) / muMax;
    };
    const double tStart = kFirst * kBinWidthS;
    const double tEnd = std::min((kLast + 1) * kBinWidthS, nOut / fs);
    std::vector<int>& eventSample = ws.eventSample;
    eventSample.clear();
    std::vector<int>& binEvents = ws.binEvents;
    binEvents.assign(binCount, 0);
    for (double lambda = cumulative(tStart);;) {
        lambda += -std::log(1.0 - Uniform(rng));
        const double t = inverse(lambda);
        if (t >= tEnd) break;
        const int n = std::min(static_cast<int>(t * fs), nOut - 1);
        eventSample.push_back(n);
        ++binEvents[std::min(binCount - 1, static_cast<int>(n / samplesPerBin))];
    }
    // Where the density is still low, every bin that holds energy gets at least one Dirac
    // (at a uniform time in the bin), so no histogram energy is dropped.
    for (int k = kFirst; k <= kLast; ++k) {
        if (!binHasEnergy[k] || binEvents[k] > 0) continue;
        const double t = (k + Uniform(rng)) * kBinWidthS;
        const int n = std::min(static_cast<int>(t * fs), nOut - 1);
        if (static_cast<int>(n / samplesPerBin) != k) continue;  // bin straddles the IR end
        eventSample.push_back(n);
        ++binEvents[k];
    }
    std::vector<float>& eventSign = ws.eventSign;
    eventSign.resize(eventSample.size());
    for (float& s : eventSign) s = (rng() & 1u) ? 1.0f : -1.0f;
    // Directions come from their own stream, so the omni channel equals the mono IR.
    std::vector<std::array<float, 4>>& eventGain = ws.eventGain;
    eventGain.resize(channels > 1 ? eventSample.size() : 0);
    if (channels > 1) {
        pcg32 dirRng = SequenceRng(ctx.seed ^ 0xD1EC7100ull, ctx.source, ctx.receiver);
        for (size_t i = 0; i < eventSample.size(); ++i)
            enc.Gains(DrawArrival(hist, eventSample[i] / fs, dirRng), eventGain[i].data());
    }

    // Diracs that fall on the same sample add up: one entry per sample, in time order, with
    // its summed sign (times the channel gains).
    std::vector<size_t>& order = ws.order;
    order.resize(eventSample.size());
    for (size_t i = 0; i < order.size(); ++i) order[i] = i;
    std::stable_sort(order.begin(), order.end(), [&](size_t p, size_t q) { return eventSample[p] < eventSample[q]; });
    std::vector<int>& at = ws.at;
    at.clear();
    std::vector<float>& weight = ws.weight;  // [entry * channels + channel]
    weight.clear();
    for (size_t i : order) {
        if (at.empty() || at.back() != eventSample[i]) {
            at.push_back(eventSample[i]);
            weight.resize(weight.size() + channels, 0.0f);
        }
        float* w = &weight[weight.size() - channels];
        w[0] += eventSign[i];
        for (int ch = 1; ch < channels; ++ch) w[ch] += eventSign[i] * eventGain[i][ch];
    }
    const int count = static_cast<int>(at.size());
    auto binOfSample = [&](int n) { return std::min(binCount - 1, static_cast<int>(n / samplesPerBin)); };

    ws.u.resize(channels);
    ws.d.resize(channels);
    ws.spectra.resize(channels);
    const int fullBins = m / 2 + 1;
    bool anyDecimated = false;
    const bool coarse = grid.coarseSum;
    for (int ch = 0; ch < channels; ++ch) ws.spectra[ch].assign(coarse ? grid.bands[kBandCount - 2].size / 2 + 1 : fullBins, 0.0f);
    // The top band (up to Nyquist) is x - l * x, x its Dirac train and l the low-pass with
    // magnitude 1 - |H_top| (zero above the band below's top edge): x stays a sparse train at
    // the full rate, l * x is computed on the grid of the band below, whose output it shares
    // (one FFT for both). Without that grid (low sample rates) it is filtered on the full grid.
    const bool complement = !grid.complementMag.empty();
    const DecimatedBand& below = grid.bands[kBandCount - 2];
    ws.shared.resize(channels);
    if (complement)
        for (int ch = 0; ch < channels; ++ch) ws.shared[ch].assign(below.size, 0.0f);
    bool sharedUsed = false;
    std::vector<float>& xb = ws.xb;
    std::vector<double> wantC(channels);

    // Per Dirac, once for all bands: its bin, and the two bin centres (with the weight of the
    // second) between which the envelope is interpolated.
    std::vector<int>&binOf = ws.binOf, &lowerBin = ws.lowerBin, &upperBin = ws.upperBin;
    std::vector<double>& upperShare = ws.upperShare;
    binOf.resize(count);
    lowerBin.resize(count);
    upperBin.resize(count);
    upperShare.resize(count);
    for (int i = 0; i < count; ++i) {
        binOf[i] = binOfSample(at[i]);
        const double pos = at[i] / samplesPerBin - 0.5;
        const int k0 = static_cast<int>(std::floor(pos));
        lowerBin[i] = pos < 0 ? 0 : std::clamp(k0, 0, binCount - 1);
        upperBin[i] = pos < 0 ? 0 : std::clamp(k0 + 1, 0, binCount - 1);
        upperShare[i] = pos < 0 ? 0.0 : pos - k0;
    }

    for (int b = 0; b < kBandCount; ++b) {
        // Envelope shaping: each Dirac gets sqrt of the histogram energy interpolated
        // linearly between bin centres (smooth across bin edges, REFERENCES Part B 5.2).
        auto envelope = [&](int i) {
            const double f = upperShare[i];
            return (1.0 - f) * mean[lowerBin[i] * kBandCount + b] + f * mean[upperBin[i] * kBandCount + b];
        };
        xb.assign(static_cast<size_t>(count) * channels, 0.0f);
        bool any = false;
        for (int i = 0; i < count; ++i) {
            if (mean[binOf[i] * kBandCount + b] <= 0) continue;
            const float amp = static_cast<float>(std::sqrt(envelope(i)));
            for (int ch = 0; ch < channels; ++ch) xb[static_cast<size_t>(i) * channels + ch] = amp * weight[static_cast<size_t>(i) * channels + ch];
            any = true;
        }
        if (!any) continue;
        // Per-bin normalisation: the Dirac train's energy in bin k equals E_b(k) exactly.
        for (int i0 = 0; i0 < count;) {
            const int k = binOf[i0];
            int i1 = i0;
            double sum = 0;
            for (; i1 < count && binOf[i1] == k; ++i1) {
                const double x = xb[static_cast<size_t>(i1) * channels];
                sum += x * x;
            }
            const double want = mean[k * kBandCount + b];
            const float g = sum > 0 ? static_cast<float>(std::sqrt(want / sum)) : 0.0f;
            for (size_t j = static_cast<size_t>(i0) * channels; j < static_cast<size_t>(i1) * channels; ++j) xb[j] *= g;
            i0 = i1;
        }

        const bool top = b == kBandCount - 1 && complement;
        const DecimatedBand& db = top ? below : grid.bands[b];
        const std::vector<float>& bandMag = top ? grid.complementMag : db.mag;
        const int r = db.decimation, mc = db.size, h = db.halfTaps;
        const int mOut = (nOut + r - 1) / r;
        RealFft& fft = ThreadRealFft(mc);
        const int nBins = fft.BinCount();
        // Target energy density per full-rate sample on this grid, and the totals.
        ws.target.assign(mOut, 0.0);
        double wanted = 0;
        std::fill(wantC.begin(), wantC.end(), 0.0);
        for (int i = 0; i < count; ++i) {
            const double x0 = xb[static_cast<size_t>(i) * channels];
            const double e = eps[b] * x0 * x0;
            ws.target[std::min(mOut - 1, (at[i] + r / 2) / r)] += e / r;
            wanted += e;
            for (int ch = 1; ch < channels; ++ch) {
                const double xc = xb[static_cast<size_t>(i) * channels + ch];
                wantC[ch] += eps[b] * xc * xc;
            }
        }
        // The train on this grid, band filtered (zero phase, FFT domain).
        ws.spectrum.resize(nBins);
        for (int ch = 0; ch < channels; ++ch) {
            std::vector<float>& u = ws.u[ch];
            u.assign(mc, 0.0f);
            for (int i = 0; i < count; ++i) {
                const float x = xb[static_cast<size_t>(i) * channels + ch];
                if (x == 0.0f) continue;
                const int n = at[i];
                if (r == 1) {
                    u[n] += x;
                    continue;
                }
                const int m0 = n / r, phase = n - m0 * r;
                const float* kern = &db.kernel[static_cast<size_t>(phase) * 2 * h];
                int p = m0 - h + 1;
                if (p >= 0 && p + 2 * h <= mc) {
                    for (int j = 0; j < 2 * h; ++j) u[p + j] += x * kern[j];
                } else {
                    for (int j = 0; j < 2 * h; ++j) u[((p + j) % mc + mc) % mc] += x * kern[j];
                }
            }
            fft.Forward(u.data(), ws.spectrum.data());
            for (int i = 0; i < nBins; ++i) ws.spectrum[i] *= bandMag[i];
            ws.d[ch].resize(mc);
            fft.Inverse(ws.spectrum.data(), ws.d[ch].data());
        }
        // Energy density per full-rate sample of the band signal on this grid, channel ch. For
        // the top band, d = x - L with L = l * x on the grid: per point L^2 plus, for the
        // Diracs of the point, (x^2 - 2 x L(n)) / R, L(n) interpolated by the same kernel.
        auto densityOf = [&](int ch, std::vector<double>& out) {
            const std::vector<float>& dc = ws.d[ch];
            out.resize(mOut);
            for (int n = 0; n < mOut; ++n) out[n] = static_cast<double>(dc[n]) * dc[n];
            if (!top) return;
            for (int i = 0; i < count; ++i) {
                const int n = at[i], m0 = n / r, phase = n - m0 * r;
                const float* kern = &db.kernel[static_cast<size_t>(phase) * 2 * h];
                const int p = m0 - h + 1;
                float l = 0;
                if (p >= 0 && p + 2 * h <= mc) {
                    for (int j = 0; j < 2 * h; ++j) l += kern[j] * dc[p + j];
                } else {
                    for (int j = 0; j < 2 * h; ++j) l += kern[j] * dc[((p + j) % mc + mc) % mc];
                }
                l *= static_cast<float>(r);
                const double x = xb[static_cast<size_t>(i) * channels + ch];
                out[std::min(mOut - 1, (n + r / 2) / r)] += (x * x - 2.0 * x * l) / r;
            }
        };

        // Energy correction on the band's time scale L_b = 8/B (>= 2 ms): random-sign
        // overlap of neighbouring Dirac responses makes a band's energy fluctuate by about
        // 1/sqrt(B L); the gain sqrt(smoothed expected / smoothed actual) removes that
        // fluctuation while varying slowly enough (~B/8) to keep the band limits. Computed on
        // the band's grid (R samples per point, R << L).
        const double bandwidth = BandUpperEdgeHz(b) - BandLowerEdgeHz(b);
        const int widthFull = std::max(3, static_cast<int>(std::max(kMinCorrectionWindowS,
                                                                    kCorrectionBandwidthPeriods / bandwidth) *
                                                           fs / 2));
        const int width = r == 1 ? widthFull : std::max(3, static_cast<int>(std::lround(static_cast<double>(widthFull) / r)));
        densityOf(0, ws.actual);
        // On the full grid the gain is computed on blocks of D samples (still >= 6 blocks per
        // box, so the window's shape is kept) and interpolated linearly between block centres.
        std::vector<double>& gain = ws.gain;
        SmoothedRatioGain(ws.target, ws.actual, r == 1 ? std::max(1, width / 6) : 1, width, 4.0, ws, gain);
        // Second stage on a long time scale: the ratio gain's bias depends on how densely
        // the Dirac responses overlap (none where they are sparse, early; a few per cent where
        // they are dense), so one scalar would leave the early part too loud and the late
        // part too quiet by a few tenths of a dB. Over kLongCorrectionPeriods windows the
        // smoothed energies barely fluctuate, so sqrt(expected / achieved) there removes that
        // drift without a bias of its own and varies far too slowly to touch the band limits.
        // On blocks of 1/16 of the window.
        {
            const int longFull = static_cast<int>(std::max(kMinLongCorrectionWindowS,
                                                           kLongCorrectionPeriods / bandwidth) * fs / 2);
            const int longW = std::max(3, static_cast<int>(std::lround(static_cast<double>(longFull) / r)));
            ws.weighted.resize(mOut);
            for (int n = 0; n < mOut; ++n) ws.weighted[n] = gain[n] * gain[n] * ws.actual[n];
            SmoothedRatioGain(ws.target, ws.weighted, std::max(1, longW / 16), longW, 2.0, ws, ws.gainLong);
            for (int n = 0; n < mOut; ++n) gain[n] *= ws.gainLong[n];
        }
        double achieved = 0;
        for (int n = 0; n < mOut; ++n) achieved += gain[n] * gain[n] * ws.actual[n];
        achieved *= r;
        // The ratio gain is biased low (a local excess of d^2 also raises its own smoothed
        // denominator), by a factor set by B L alone: one scalar per band restores the
        // band's total energy exactly.
        const double fix = achieved > 0 ? std::sqrt(wanted / achieved) : 1.0;
        // The omni channel's gain serves every channel, so the channels stay coherent. A
        // directional channel's own overlap terms are independent of the omni's (their
        // products carry y_i y_j of either sign), so the gain raises its energy by the mean
        // of g^2 (> 1): one scalar per channel and band restores its expected total.
        for (int ch = 0; ch < channels; ++ch) {
            const std::vector<float>& dc = ws.d[ch];
            double fixC = fix;
            if (ch > 0) {
                densityOf(ch, ws.actualC);
                double got = 0;
                for (int n = 0; n < mOut; ++n) got += gain[n] * gain[n] * ws.actualC[n];
                got *= r;
                fixC = got > 0 ? std::sqrt(wantC[ch] / got) : 1.0;
            }
            if (r == 1) {
                for (int n = 0; n < nOut; ++n) outs[ch][n] += static_cast<float>(fixC * gain[n] * dc[n]);
                continue;
            }
            if (top) {
                // The sparse part at the full rate, the gain interpolated linearly between
                // grid points; - gain L joins the shared grid.
                for (int i = 0; i < count; ++i) {
                    const double pos = static_cast<double>(at[i]) / r;
                    const int k0 = static_cast<int>(std::floor(pos));
                    const double f = pos - k0;
                    const double g0 = gain[std::clamp(k0, 0, mOut - 1)], g1 = gain[std::clamp(k0 + 1, 0, mOut - 1)];
                    outs[ch][at[i]] += static_cast<float>(fixC * (g0 + f * (g1 - g0)) * xb[static_cast<size_t>(i) * channels + ch]);
                }
            }
            // Past the IR (ring-out, and the pre-ringing wrapped to the grid's end) the edge
            // gains continue, so the interpolation to the full rate stays smooth at both ends.
            const int split = (mOut + mc) / 2;
            const double sign = top ? -1.0 : 1.0;
            const bool toShared = complement && (top || b == kBandCount - 2);
            ws.y.resize(mc);
            std::vector<float>& y = toShared ? ws.shared[ch] : ws.y;
            for (int n = 0; n < mc; ++n) {
                const double g = n < mOut ? gain[n] : gain[n < split ? mOut - 1 : 0];
                const float v = static_cast<float>(sign * fixC * g * dc[n]);
                if (toShared) y[n] += v;
                else y[n] = v;
            }
            anyDecimated = true;
            if (toShared) {
                sharedUsed = true;
                continue;
            }
            // On the coarse sum's grid (step R_s) the band's spectrum weighs R / R_s.
            EmbedGridSpectrum(fft, y, coarse ? static_cast<double>(r) / below.decimation : r, ws.spectrum,
                              ws.spectra[ch]);
        }
    }
    if (coarse) {
        // The sum of the lower bands on the grid below (one inverse transform of that size),
        // plus the shared grid's signal, then interpolated to the full rate with the 80 dB
        // kernel (its pass band covers everything below the top band's lower edge).
        if (!anyDecimated && !sharedUsed) return;
        RealFft& fft = ThreadRealFft(below.size);
        const int rs = below.decimation, mc = below.size, h = grid.interpHalfTaps;
        ws.full.resize(1);
        ws.full[0].resize(mc);
        std::vector<float>& g = ws.full[0];
        for (int ch = 0; ch < channels; ++ch) {
            if (anyDecimated) fft.Inverse(ws.spectra[ch].data(), g.data());
            else std::fill(g.begin(), g.end(), 0.0f);
            if (sharedUsed)
                for (int k = 0; k < mc; ++k) g[k] += ws.shared[ch][k];
            // Grid points m0 = 0 .. mOut - 1 give the output samples m0 R_s + phase. The grid
            // is circular: a copy with h - 1 points before and h after avoids index wraps, and
            // per phase the taps run as contiguous multiply-adds over all grid points.
            const int mOut = (nOut + rs - 1) / rs;
            std::vector<float>& gp = ws.y;
            gp.resize(static_cast<size_t>(mOut) + 2 * h);
            for (int k = 0; k < mOut + 2 * h - 1; ++k) {
                int idx = k - h + 1;
                if (idx < 0 || idx >= mc) idx = (idx % mc + mc) % mc;
                gp[k] = g[idx];
            }
            std::vector<float>& acc = ws.interp;
            acc.resize(mOut);
            std::vector<float>& o = outs[ch];
            for (int phase = 0; phase < rs; ++phase) {
                const float* kern = &grid.interpKernel[static_cast<size_t>(phase) * 2 * h];
                if (phase == 0) {
                    // Kernel taps at whole grid steps are those of sinc(j): 1 at the centre, 0 else.
                    for (int m0 = 0; m0 < mOut; ++m0) acc[m0] = gp[m0 + h - 1];
                } else {
                    std::fill(acc.begin(), acc.end(), 0.0f);
                    for (int j = 0; j < 2 * h; ++j) {
                        const float kj = static_cast<float>(rs) * kern[j];
                        const float* src = &gp[j];
                        for (int m0 = 0; m0 < mOut; ++m0) acc[m0] += kj * src[m0];
                    }
                }
                for (int m0 = 0, n = phase; m0 < mOut && n < nOut; ++m0, n += rs) o[n] += acc[m0];
            }
        }
        return;
    }
    if (sharedUsed) {
        RealFft& fft = ThreadRealFft(below.size);
        ws.spectrum.resize(fft.BinCount());
        for (int ch = 0; ch < channels; ++ch) EmbedGridSpectrum(fft, ws.shared[ch], below.decimation, ws.spectrum, ws.spectra[ch]);
    }
    if (!anyDecimated) return;
    RealFft& fullFft = ThreadRealFft(m);
    ws.full.resize(1);
    ws.full[0].resize(m);
    for (int ch = 0; ch < channels; ++ch) {
        fullFft.Inverse(ws.spectra[ch].data(), ws.full[0].data());
        for (int n = 0; n < nOut; ++n) outs[ch][n] += ws.full[0][n];
    }
}

/* The specular part: per band a train of windowed-sinc pulses at the exact delays, band
   filtered by the same bank and summed; added into `out`. */
}  // namespace

void AddSpecularKernelPart(const ReceiverPaths& paths, const SynthesisContext& ctx, int nOut,
                           const PathKernel& kernelOf, std::vector<float>& out) {
    if (paths.paths.empty()) return;
    const double fs = ctx.sampleRate;
    // Kernels first: their length and extra delays set the grid.
    std::vector<std::vector<float>> kernels(paths.paths.size());
    std::vector<double> delays(paths.paths.size());
    double last = 0;
    size_t longest = 1;
    for (size_t i = 0; i < paths.paths.size(); ++i) {
        double extra = 0;
        kernelOf(paths.paths[i], kernels[i], extra);
        delays[i] = paths.paths[i].delayS + extra;
        last = std::max(last, delays[i]);
        longest = std::max(longest, kernels[i].size());
    }
    // The paths usually end long before the IR does: an FFT grid just long enough for the
    // last pulse plus the bank's ringing (kSpecularPadS each side) keeps this part cheap. Its
    // size is rounded up on a coarse ladder, so that seats share grids and FFT plans.
    const int pad = static_cast<int>(std::ceil(kSpecularPadS * fs));
    const int span = std::min<long>(nOut, static_cast<long>(std::ceil(last * fs)) + kFractionalDelayHalfTaps +
                                              static_cast<long>(longest) + 1);
    const std::shared_ptr<const LateGrid> grid = LateGridFor(SpecularGridSize(span + 2 * pad, ctx.sampleRate),
                                                             ctx.sampleRate);
    const int m = grid->size;
    const int nSpan = std::min(nOut, m - pad);  // samples of this grid that are valid output
    const double i0Beta = BesselI0(kKaiserBeta);
    constexpr int kTaps = 2 * kFractionalDelayHalfTaps;

    // Per band, the train of pulses: on the full grid for bands that reach Nyquist, else
    // directly on the band's decimated grid (the decimation kernel of the late part; its
    // pass band is flat to ~1e-4 over the band, and it is zero phase, so delays are kept).
    // The top band, as in the late part, is x - l * x when the band below is decimated: the
    // pulses themselves go straight to the output, their low-pass l * x (magnitude
    // 1 - |H_top|) is computed on the band below's grid, so the top band needs no transform of
    // the full specular grid.
    // A path rotated by phi (response.h, coherentReflections) adds cos(phi) of its pulse to
    // these trains and sin(phi) of it to a second set, the quadrature trains, whose spectra
    // are turned by -j (the Hilbert transform) before they join the sum. The top band's
    // quadrature train stays on the full grid (the Hilbert transform of a sparse train is not
    // sparse), filtered there by |H_top|.
    const bool complement = !grid->complementMag.empty();
    const DecimatedBand& below = grid->bands[kBandCount - 2];
    thread_local std::vector<std::vector<float>> train, quad;
    train.resize(kBandCount + 1);  // [kBandCount]: the top band's train on the grid below
    quad.resize(kBandCount);       // the top band's on the full grid when `complement`
    std::array<bool, kBandCount> used{}, usedQuad{};
    for (int b = 0; b < kBandCount; ++b) {
        const bool top = complement && b == kBandCount - 1;
        train[b].assign(top ? 0 : grid->bands[b].size, 0.0f);
        quad[b].clear();
    }
    train[kBandCount].assign(complement ? below.size : 0, 0.0f);
    std::vector<double> taps(kTaps), pulse;
    const std::vector<double> phases = ReflectionPhases(paths, ctx);
    for (size_t pi = 0; pi < paths.paths.size(); ++pi) {
        const SpecularPath& p = paths.paths[pi];
        const std::vector<float>& kernel = kernels[pi];
        if (kernel.empty()) continue;
        const double pos = delays[pi] * fs;
        if (pos >= nOut) continue;
        const long n0 = static_cast<long>(std::floor(pos));
        // Taps j = n0 - K + 1 .. n0 + K, value sinc(j - pos) * Kaiser, convolved with the
        // path's kernel (a single gain, or an HRIR).
        for (int i = 0; i < kTaps; ++i) {
            const long j = n0 - kFractionalDelayHalfTaps + 1 + i;
            taps[i] = FractionalDelayTap(static_cast<double>(j) - pos, i0Beta);
        }
        pulse.assign(kTaps + kernel.size() - 1, 0.0);
        for (int i = 0; i < kTaps; ++i)
            for (size_t k = 0; k < kernel.size(); ++k) pulse[i + k] += taps[i] * kernel[k];
        const double phi = phases[pi];
        const double cosPhi = std::cos(phi), sinPhi = std::sin(phi);
        const bool rotated = phi != 0.0;
        for (int b = 0; b < kBandCount; ++b) {
            const double amp = std::sqrt(p.energy[b]);
            if (amp == 0) continue;
            used[b] = true;
            const bool top = complement && b == kBandCount - 1;
            const DecimatedBand& db = top ? below : grid->bands[b];
            const int r = db.decimation, mc = db.size, h = db.sharpHalfTaps;
            std::vector<float>& u = train[top ? kBandCount : b];
            std::vector<float>& v = quad[b];
            if (rotated && !usedQuad[b]) {
                usedQuad[b] = true;
                v.assign(top ? m : mc, 0.0f);
            }
            for (size_t i = 0; i < pulse.size(); ++i) {
                const long j = n0 - kFractionalDelayHalfTaps + 1 + static_cast<long>(i);
                if (j < 0 || j >= m) continue;
                const float x = static_cast<float>(amp * cosPhi * pulse[i]);
                const float xq = static_cast<float>(amp * sinPhi * pulse[i]);
                if (top) {
                    if (j < nSpan) out[j] += x;
                    if (rotated) v[j] += xq;
                }
                if (r == 1) {
                    u[j] += x;
                    if (rotated) v[j] += xq;
                    continue;
                }
                const int m0 = static_cast<int>(j / r), phase = static_cast<int>(j - static_cast<long>(m0) * r);
                const float* kern = &db.sharpKernel[static_cast<size_t>(phase) * 2 * h];
                const int q = m0 - h + 1;
                const bool quadHere = rotated && !top;
                if (q >= 0 && q + 2 * h <= mc) {
                    for (int t = 0; t < 2 * h; ++t) u[q + t] += x * kern[t];
                    if (quadHere)
                        for (int t = 0; t < 2 * h; ++t) v[q + t] += xq * kern[t];
                } else {
                    for (int t = 0; t < 2 * h; ++t) u[((q + t) % mc + mc) % mc] += x * kern[t];
                    if (quadHere)
                        for (int t = 0; t < 2 * h; ++t) v[((q + t) % mc + mc) % mc] += xq * kern[t];
                }
            }
        }
    }
    bool any = false;
    for (bool u : used) any = any || u;
    if (!any) return;
    // Band filter each train on its grid and place its spectrum (times R: band-limited
    // interpolation) into the full grid's; one inverse FFT gives the sum at the full rate.
    // Quadrature spectra are multiplied by -j and by a high-pass that takes them to zero at
    // DC (the Hilbert transform's sign step there would ring for the whole grid); it is 1
    // from kQuadratureFullHz on, below every analysis band.
    thread_local std::vector<std::complex<float>> total, spectrum;
    total.assign(m / 2 + 1, 0.0f);
    const std::complex<float> minusJ(0.0f, -1.0f);
    auto quadratureGain = [&](int i) {
        const double f = static_cast<double>(i) * fs / m, top = kQuadratureTopShare * 0.5 * fs;
        if (f <= kQuadratureZeroHz || f >= 0.5 * fs) return 0.0f;
        if (f < kQuadratureFullHz)
            return static_cast<float>(0.5 - 0.5 * std::cos(kPi * (f - kQuadratureZeroHz) /
                                                            (kQuadratureFullHz - kQuadratureZeroHz)));
        if (f > top) return static_cast<float>(0.5 + 0.5 * std::cos(kPi * (f - top) / (0.5 * fs - top)));
        return 1.0f;
    };
    for (int b = 0; b < kBandCount; ++b) {
        if (!used[b]) continue;
        const bool top = complement && b == kBandCount - 1;
        const DecimatedBand& db = top ? below : grid->bands[b];
        const std::vector<float>& bandMag = top ? grid->complementMag : db.mag;
        RealFft& fft = ThreadRealFft(db.size);
        const int nBins = fft.BinCount();
        spectrum.resize(nBins);
        fft.Forward(train[top ? kBandCount : b].data(), spectrum.data());
        const float scale = static_cast<float>(top ? -db.decimation : db.decimation);
        if (db.decimation == 1) {
            for (int i = 0; i < nBins; ++i) total[i] += spectrum[i] * bandMag[i];
        } else {
            for (int i = 0; i < nBins - 1; ++i) total[i] += scale * bandMag[i] * spectrum[i];
            total[nBins - 1] += 0.5f * scale * bandMag[nBins - 1] * spectrum[nBins - 1];
        }
        if (!usedQuad[b]) continue;
        if (top) {
            // |H_top| on the full grid: 1 - complementMag where that is defined, 1 above.
            RealFft& full = ThreadRealFft(m);
            spectrum.resize(full.BinCount());
            full.Forward(quad[b].data(), spectrum.data());
            const int cm = static_cast<int>(grid->complementMag.size());
            for (int i = 1; i < full.BinCount() - 1; ++i) {
                const float mag = i < cm ? 1.0f - grid->complementMag[i] : 1.0f;
                total[i] += minusJ * (mag * quadratureGain(i)) * spectrum[i];
            }
            continue;
        }
        fft.Forward(quad[b].data(), spectrum.data());
        const float qs = static_cast<float>(db.decimation);
        for (int i = 1; i < nBins - 1; ++i) total[i] += minusJ * (qs * bandMag[i] * quadratureGain(i)) * spectrum[i];
    }
    thread_local std::vector<float> y;
    y.resize(m);
    ThreadRealFft(m).Inverse(total.data(), y.data());
    for (int n = 0; n < nSpan; ++n) out[n] += y[n];
}

namespace {

/* The specular part of one channel: each path's pulse scaled by its channel gain. */
void AddSpecularPart(const ReceiverPaths& paths, const SynthesisContext& ctx, int nOut,
                     const Encoder& enc, int channel, std::vector<float>& out) {
    AddSpecularKernelPart(paths, ctx, nOut, [&](const SpecularPath& p, std::vector<float>& k, double& extra) {
        float g[4];
        enc.Gains(p.arrivalFrom, g);
        extra = 0;
        if (g[channel] == 0.0f) k.clear();
        else k.assign(1, g[channel]);
    }, out);
}

}  // namespace

double GReferenceEnergy() { return 1.0 / (4.0 * kPi * 100.0); }

const char* GReferenceDefinition() {
    return "sum over samples of p(n)^2 (no 1/fs factor) of the IR of a unit-energy, white, "
           "omnidirectional source in free field at 10 m without air absorption (a single "
           "Dirac of amplitude 1/sqrt(400 pi)); per band b through an analysis filter a_b the "
           "reference is reference_energy * sum_n a_b(n)^2, so "
           "G_b = 10 lg(sum_n (a_b * p)(n)^2 / (reference_energy * sum_n a_b(n)^2))";
}

double SynthesisBandMagnitude(int band, double frequencyHz) {
    double mag = 1.0;
    if (band > 0) mag *= UpperShare(frequencyHz, band - 1);
    if (band < kBandCount - 1) mag *= 1.0 - UpperShare(frequencyHz, band);
    return mag;
}

namespace {

ImpulseResponse SynthesizeEncoded(const ReceiverPaths& specular, const ReceiverHistogram& tracer,
                                  const SynthesisContext& context, const Encoder& enc,
                                  Diagnostics& diag, bool includeSpecular = true) {
    ImpulseResponse ir;
    ir.channels = enc.channels;
    ir.layout = enc.channels == 1 ? "mono" : "ambix-acn-sn3d";
    ir.sampleRate = context.sampleRate;
    ir.referenceEnergy = GReferenceEnergy();
    if (!Validate(specular, tracer, context, diag)) return ir;

    // IR length: the context's, else the histogram's, else just past the last path.
    double lengthS = context.lengthS;
    if (lengthS <= 0) lengthS = tracer.binCount * kBinWidthS;
    double lastDelay = 0, firstDelay = 1e30;
    for (const SpecularPath& p : specular.paths) {
        lastDelay = std::max(lastDelay, p.delayS);
        firstDelay = std::min(firstDelay, p.delayS);
    }
    if (lengthS <= 0) lengthS = lastDelay + 0.05;
    ir.directDelayS = specular.paths.empty() ? tracer.directDelayS : firstDelay;
    const double fs = context.sampleRate;
    const int nOut = std::max(1, static_cast<int>(std::ceil(lengthS * fs)));
    const int pad = static_cast<int>(std::ceil(kPadS * fs));
    const std::shared_ptr<const LateGrid> grid = LateGridFor(LateGridSize(nOut + 2 * pad, context.sampleRate),
                                                             context.sampleRate);
    ir.bandEnergyOfUnitDirac = grid->eps;

    std::vector<std::vector<float>> outs(enc.channels, std::vector<float>(nOut, 0.0f));
    AddLatePart(tracer, context, nOut, *grid, enc, outs);
    if (includeSpecular)
        for (int c = 0; c < enc.channels; ++c) AddSpecularPart(specular, context, nOut, enc, c, outs[c]);
    if (enc.channels == 1) {
        ir.samples = std::move(outs[0]);
    } else {
        ir.samples.resize(static_cast<size_t>(nOut) * enc.channels);
        for (int n = 0; n < nOut; ++n)
            for (int c = 0; c < enc.channels; ++c) ir.samples[static_cast<size_t>(n) * enc.channels + c] = outs[c][n];
    }
    return ir;
}

}  // namespace

ImpulseResponse Synthesize(const ReceiverPaths& specular, const ReceiverHistogram& tracer,
                           const SynthesisContext& context, Diagnostics& diag) {
    return SynthesizeEncoded(specular, tracer, context, Encoder{}, diag);
}

ImpulseResponse SynthesizeAmbixPart(const ReceiverPaths& specular, const ReceiverHistogram& tracer,
                                    const SynthesisContext& context, const Vec3& facing,
                                    bool includeSpecular, Diagnostics& diag) {
    Encoder enc;
    enc.channels = 4;
    const Vec3 worldUp(0, 1, 0);
    if (!facing.allFinite() || facing.norm() < 1e-9 || std::fabs(facing.normalized().dot(worldUp)) > 1 - 1e-9) {
        diag.Error({"", 0, 0, "receiver " + std::to_string(context.receiver)},
                   "the seat's facing must be a finite, non-vertical direction for an AmbiX head frame");
        ImpulseResponse ir;
        ir.channels = 4;
        ir.layout = "ambix-acn-sn3d";
        return ir;
    }
    // Head frame: front = facing, up = internal y made orthogonal to it, left = up x front.
    enc.front = facing.normalized();
    enc.up = (worldUp - worldUp.dot(enc.front) * enc.front).normalized();
    enc.left = enc.up.cross(enc.front);
    return SynthesizeEncoded(specular, tracer, context, enc, diag, includeSpecular);
}

ImpulseResponse SynthesizeAmbix(const ReceiverPaths& specular, const ReceiverHistogram& tracer,
                                const SynthesisContext& context, const Vec3& facing,
                                Diagnostics& diag) {
    return SynthesizeAmbixPart(specular, tracer, context, facing, true, diag);
}

ImpulseResponse Synthesize(const ReceiverPaths& specular, const ReceiverHistogram& tracer,
                           const SynthesisContext& context) {
    Diagnostics diag;
    ImpulseResponse ir = Synthesize(specular, tracer, context, diag);
    HW_CHECK(!diag.HasErrors(), diag.ToString());
    return ir;
}

int SynthesizeAllMono(const std::vector<ReceiverPaths>& paths,
                      const std::vector<ReceiverHistogram>& histograms,
                      const SynthesisContext& context, const ImpulseResponseSink& sink,
                      Diagnostics& diag) {
    if (paths.size() != histograms.size()) {
        diag.Error({}, "synthesis needs one path list per histogram (got " +
                           std::to_string(paths.size()) + " and " +
                           std::to_string(histograms.size()) + ")");
        return 0;
    }
    const int count = static_cast<int>(histograms.size());
    std::vector<Diagnostics> perPair(count);
    std::vector<char> made(count, 0);
    // One pair per task: each worker holds one IR at a time.
    tbb::parallel_for(0, count, [&](int i) {
        SynthesisContext ctx = context;
        ctx.source = histograms[i].source;
        ctx.receiver = histograms[i].receiver;
        ImpulseResponse ir = Synthesize(paths[i], histograms[i], ctx, perPair[i]);
        if (perPair[i].HasErrors()) return;
        made[i] = 1;
        if (sink) sink(ir, i);
    });
    int total = 0;
    for (int i = 0; i < count; ++i) {
        diag.Append(perPair[i]);
        total += made[i];
    }
    return total;
}

}  // namespace hallwright
