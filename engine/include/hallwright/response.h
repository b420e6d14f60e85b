#pragma once
// Impulse-response synthesis: specular paths (image sources) as band-shaped pulses at their
// exact delays, plus the tracer's late/scattered energy as a band-weighted Poisson Dirac
// sequence (Kuttruff, Room Acoustics; Vorlaender, Auralization, 2008; Heinz 1993 hybrid).
//
// Spectral convention (one for both parts). The source is WHITE: its pressure impulse
// response in free field at distance r, without air loss, is a single Dirac of amplitude
// 1/sqrt(4 pi r^2), so the IR's broadband energy sum_n p(n)^2 (plain sum over samples, no
// 1/fs factor) equals the propagation energy 1/(4 pi r^2) of propagation.h. A histogram or
// path value E_b ("energy per unit band source energy", per band b) is therefore carried
// into the IR as the share E_b * eps_b, where eps_b = sum_n h_b(n)^2 is the band-b energy
// of a unit white Dirac under the band filter h_b. With this rule a path whose band
// energies are all equal becomes a plain (fractionally delayed) Dirac, and any band
// filter A_b measures, for direct and reverberant sound alike,
//     band energy of the IR through A_b = E_b * sum_n a_b(n)^2,
// so the direct-to-reverberant ratio per band is the histogram's whatever analysis filter
// is used (up to leakage between neighbouring bands at the crossovers).
//
// Reference energy of G: a unit-energy source in free field at 10 m without air absorption
// gives the Dirac of amplitude 1/sqrt(400 pi); its broadband energy sum_n p(n)^2 =
// 1/(400 pi) = 7.9577e-4 is ImpulseResponse::referenceEnergy. G in band b through an
// analysis filter a_b is  G_b = 10 lg( sum_n (a_b * p)(n)^2 / (referenceEnergy *
// sum_n a_b(n)^2) ), i.e. the reference per band is referenceEnergy times the band energy of
// a unit Dirac under the SAME filter (ISO 3382-1 A.2.1: p_10 is the free-field IR at 10 m).
//
// Filter bank (synthesis): zero-phase (linear-phase FIR applied by FFT) with complementary
// raised-cosine-type magnitude responses on a log-frequency axis. Crossover k (k = 0..6) sits
// at the IEC 61260-1 edge between bands k and k+1; across u = log2(f/fc)/w in [-1, 1], with
// w = kCrossoverHalfWidthOct, the upper band rises as (1 + sin(pi/2 sin(pi u / 2)))/2 and the
// lower band falls as its complement (both 0.5 at fc). Band 0 extends to DC, band 7 to
// Nyquist, so the eight magnitudes sum to exactly 1 at every frequency (a flat bank).
// Sample 0 of an IR is the emission time; the bank's pre-ringing (low bands: tens of ms)
// before sample 0 is cut, which matters only for the 63/125 Hz bands of arrivals within a few
// tens of ms of emission.
#include <complex>
#include <cstdint>
#include <functional>
#include <memory>
#include <string>
#include <vector>

#include "hallwright/bands.h"
#include "hallwright/diagnostics.h"
#include "hallwright/propagation.h"

namespace hallwright {

/* Half-width, in octaves, of each crossover of the synthesis bank. */
constexpr double kCrossoverHalfWidthOct = 1.0 / 6.0;
/* Default cap of the Dirac density in 1/s (REFERENCES Part B 5.1: about 1e4 after
   Schroeder 2011; attribution from memory, uncertain). */
constexpr double kDefaultMaxReflectionDensity = 1.0e4;
/* Windowed-sinc fractional-delay kernel: taps on each side of the delay (Kaiser window). */
constexpr int kFractionalDelayHalfTaps = 32;
/* Lowest sample rate accepted: the 8 kHz band (upper edge 11.2 kHz) must fit below Nyquist. */
constexpr int kMinSampleRate = 24000;

/* Reference energy of G in IR units (see above): 1 / (4 pi 10^2). */
double GReferenceEnergy();
/* Text stored in sidecars that defines referenceEnergy. */
const char* GReferenceDefinition();

/* Magnitude (zero phase) of synthesis band `band` at frequency f; the 8 bands sum to 1. */
double SynthesisBandMagnitude(int band, double frequencyHz);

/* Everything synthesis needs besides the propagation results. */
struct SynthesisContext {
    int sampleRate = 48000;
    double roomVolumeM3 = 0;        // for the reflection density 4 pi c^3 t^2 / V
    double speedOfSound = 343.2;    // m/s
    uint64_t seed = 1;              // with (source, receiver) keys the Dirac-sequence stream
    int source = 0, receiver = 0;
    double lengthS = 0;             // IR length; 0 = the histogram's length (binCount bins)
    double maxReflectionDensity = kDefaultMaxReflectionDensity;  // 1/s
    /* Reflection phase of the specular paths of order >= 1. false (the default): each path
       gets a pseudo-random constant phase phi (an all-pass rotation cos(phi) p + sin(phi)
       Hilbert(p), the same in every band and channel, keyed by seed, source, receiver and
       path index), because the absorption data carry no phase: the IR's band energies are
       then unbiased against the energy sum the parameter table uses, instead of following one
       interference pattern of an idealised point source and receiver. true: every path adds
       in phase as a real, positive pressure gain (interference as at one exact point). */
    bool coherentReflections = false;
};

/* A synthesized impulse response; samples[frame * channels + channel]. */
struct ImpulseResponse {
    int sampleRate = 48000;
    int channels = 1;
    std::string layout = "mono";    // "mono", "ambix-acn-sn3d" or "binaural-lr"
    std::vector<float> samples;
    double referenceEnergy = 0;     // energy of G's 10 m free-field reference (see above)
    Bands bandEnergyOfUnitDirac = Bands::Zero();  // eps_b of the synthesis bank
    double directDelayS = 0;        // first specular arrival (or histogram direct delay)

    size_t FrameCount() const { return channels > 0 ? samples.size() / channels : 0; }
};

/* Synthesizes the mono IR of one (source, receiver): specular paths plus the tracer's late
   part. Invalid input (mismatched histogram size, non-finite energy, bad context) gives an
   empty IR and an error in diag. Deterministic for a given context. */
ImpulseResponse Synthesize(const ReceiverPaths& specular, const ReceiverHistogram& tracer,
                           const SynthesisContext& context, Diagnostics& diag);
/* Same, for callers that pass only engine-made, valid data: throws (HW_CHECK) on bad input. */
ImpulseResponse Synthesize(const ReceiverPaths& specular, const ReceiverHistogram& tracer,
                           const SynthesisContext& context);

/* First-order Ambisonics IR, AmbiX (ACN order W, Y, Z, X; SN3D; Nachbar et al. 2011), in
   the listener's head frame: front = `facing` (internal frame), up = internal +y made
   orthogonal to it, left = up x front. Specular paths are encoded from their arrival
   directions; each Dirac of the late part is encoded coherently into all four channels from
   a direction drawn from the tracer's directional record for its 10 ms bin (isotropic where
   the record is empty). W equals the mono IR of Synthesize sample for sample, so the same
   referenceEnergy applies to W. */
ImpulseResponse SynthesizeAmbix(const ReceiverPaths& specular, const ReceiverHistogram& tracer,
                                const SynthesisContext& context, const Vec3& facing,
                                Diagnostics& diag);

/* Default HRTF set (Debian's libmysofa installs MIT KEMAR, normal pinna). */
constexpr const char* kDefaultHrtfPath = "/usr/share/libmysofa/default.sofa";

/* An HRTF set read with libmysofa, resampled to one sample rate (AES69 SOFA,
   SimpleFreeFieldHRIR). Lookups are thread-safe (serialised). */
class HrtfSet {
  public:
    /* Opens and resamples a SOFA file; nothing and an error naming the file on failure. */
    static std::unique_ptr<HrtfSet> Open(const std::string& path, int sampleRate, Diagnostics& diag);
    ~HrtfSet();
    HrtfSet(const HrtfSet&) = delete;
    HrtfSet& operator=(const HrtfSet&) = delete;
    int FilterLength() const;
    /* HRIR pair (left, right) for a head-frame direction (x front, y left, z up, as SOFA and
       AmbiX) with the set's broadband delays in seconds (libmysofa interpolates). */
    void Filter(const Vec3& headDir, std::vector<float>& left, std::vector<float>& right,
                double& delayLeftS, double& delayRightS) const;

  private:
    HrtfSet();
    /* Late-part decoder filters for one FFT size, [ear * 4 + AmbiX channel][bin] (binaural.cpp);
       made once per size and kept. */
    std::shared_ptr<const std::vector<std::vector<std::complex<float>>>> DecoderFilters(int fftSize,
                                                                                       double sampleRate) const;
    friend ImpulseResponse SynthesizeBinaural(const ReceiverPaths&, const ReceiverHistogram&,
                                              const SynthesisContext&, const Vec3&, const HrtfSet&,
                                              Diagnostics&);
    struct Impl;
    std::unique_ptr<Impl> impl_;
};

/* Two-channel (left, right) binaural IR in the head frame of `facing` (as SynthesizeAmbix):
   each specular path through the HRIR pair of its direction at its exact delay plus the
   set's delay; the late part synthesized as AmbiX and decoded to eight virtual sources
   (cube corners, basic decoder), each convolved with its HRIR pair (16 FFT convolutions).
   The level follows libmysofa's normalised set, so G is not defined on binaural files. */
ImpulseResponse SynthesizeBinaural(const ReceiverPaths& specular, const ReceiverHistogram& tracer,
                                   const SynthesisContext& context, const Vec3& facing,
                                   const HrtfSet& hrtf, Diagnostics& diag);

/* Called once per finished IR (source, receiver order of the inputs); may be called from
   several threads at once, so it must be thread-safe. */
using ImpulseResponseSink = std::function<void(const ImpulseResponse&, int pairIndex)>;

/* Mono IR for every (paths[i], histograms[i]) pair, one seat at a time per worker thread
   (never all IRs in memory): context.source/receiver are taken from each histogram. This is
   the function tools/bench times for the `synthesis` case. Returns the number of IRs made;
   errors are appended to diag in pair order. */
int SynthesizeAllMono(const std::vector<ReceiverPaths>& paths,
                      const std::vector<ReceiverHistogram>& histograms,
                      const SynthesisContext& context, const ImpulseResponseSink& sink,
                      Diagnostics& diag);

}  // namespace hallwright
