#pragma once
// Stochastic ray tracing (the diffuse and late part of the hybrid): rays from one source,
// eight band energies each, per-hit absorption, specular or Lambert reflection by the
// scattering coefficient (ISO 17497-1), air absorption per segment (ISO 9613-1), energy
// scored at receiver spheres into per-seat histograms (layout in propagation.h).
//
// Variance control ("band splitting"): at each hit one uniform number u decides, per band,
// diffuse (u < s_band) or specular. Bands that decide alike travel on together; when they
// decide differently the ray splits into a diffuse and a specular sub-ray, each carrying its
// own subset of bands. Every band therefore follows exactly the path distribution it would
// have if traced alone (no reweighting, so no variance inflation), while bands with equal
// scattering share all their segments. The alternative, one direction for all bands with
// per-band weights s_b/p and (1-s_b)/(1-p), is kept as an option so its inflation can be
// measured (tests/propagation/ray_tracer_test.cpp).
//
// Receiver estimator: each receiver is a sphere of radius r (not touching any surface); a
// segment crossing it scores E * chord / V_sphere (V = 4/3 pi r^3), at the time of the chord
// midpoint with the air loss up to that point. In free field this track-length estimator
// gives the volume average of 1/(4 pi d^2) over the sphere, i.e. 1/(4 pi D^2) up to
// O(r^2/D^2) (units of propagation.h). Hybrid rule: a sub-ray is scored only if it has had a
// Lambert reflection or more than imageOrder reflections (or with recordAll); the direct
// sound and purely specular paths up to imageOrder come from the image sources. No diffuse
// rain and no Russian roulette: every ray is followed to the duration, so the bookkeeping
// emitted = absorbed + air + escaped + remaining holds per band to rounding.
#include <atomic>
#include <cstdint>
#include <optional>
#include <vector>

#include "hallwright/bands.h"
#include "hallwright/diagnostics.h"
#include "hallwright/propagation.h"
#include "hallwright/room.h"

namespace hallwright {

enum class ReflectionSampling {
    kBandSplit,         // default: split the ray where bands decide differently (see above)
    kSharedDirection,   // one choice for all bands, per-band reweighting (measurement only;
                        // its weights make the bookkeeping hold in expectation only)
};

struct TracerOptions {
    int64_t rays = 100000;           // primary rays per source; ray i is in batch i % kBatchCount
                                     // (use a multiple of kBatchCount for equal batches)
    uint64_t seed = 1;
    int imageOrder = 3;              // purely specular paths up to this order are not recorded
    bool recordAll = false;          // tracer alone: also record direct and low-order specular
    std::optional<double> durationS; // default: DefaultTraceDuration()
    double receiverRadiusM = 0;      // 0: automatic (ReceiverRadius() in ray_tracer.h)
    bool airAbsorption = true;       // false only for tests against formulas without air
    uint8_t bandMask = 0xFF;         // bands traced (bit b = band b); others stay zero
    ReflectionSampling sampling = ReflectionSampling::kBandSplit;
    std::vector<int> receivers;      // receiver indices to score; empty = all of the room's
    bool keepEscapedRays = true;     // store up to kMaxEscapedRecords escaped rays
    /* When set and it becomes true, no further chunk starts; the result is then marked
       `cancelled` and must be discarded (used by the CLI for Ctrl-C). */
    const std::atomic<bool>* cancel = nullptr;
    /* When set, the number of primary rays finished so far (for a progress display). */
    std::atomic<int64_t>* raysDone = nullptr;
};

/* One ray that left the model: where it left (last surface point) and its direction. */
struct EscapedRay {
    Vec3 origin, direction;
    int64_t ray = 0;
    int lastTriangle = -1;  // mesh triangle the ray left from (-1: the source)
};

struct TracerResult {
    int source = 0;
    double durationS = 0;
    double receiverRadiusM = 0;              // the automatic or given radius before clamping
    std::vector<double> receiverRadii;       // per histogram, after the surface clamp
    std::vector<ReceiverHistogram> histograms;  // one per scored receiver, in option order
    /* Energy bookkeeping per band, double, summed in a fixed order (units: source energy). */
    Bands emitted = Bands::Zero(), absorbed = Bands::Zero(), air = Bands::Zero(),
          escaped = Bands::Zero(), remaining = Bands::Zero();
    bool cancelled = false;    // stopped early through TracerOptions::cancel: incomplete
    int64_t rays = 0;          // primary rays
    int64_t subRays = 0;       // primary rays plus the sub-rays created by band splitting
    int64_t segments = 0;      // ray casts that ended on a surface, the duration or escaped
    int64_t reflections = 0;
    int64_t escapedRays = 0;   // sub-rays that left the model
    int64_t fallbackCasts = 0; // casts repeated by the edge/corner fallback (see .cpp)
    int64_t cornerHits = 0;    // rays tangent to an acute corner, reflected there (see .cpp)
    int64_t receiverHits = 0;  // receiver-sphere crossings scored
    std::vector<EscapedRay> escapedSamples;  // first kMaxEscapedRecords in ray order
};

constexpr size_t kMaxEscapedRecords = 64;

/* Traces one source of the room and scores every (or the chosen) receiver. */
TracerResult TraceSource(const Room& room, int source, const TracerOptions& options,
                         Diagnostics& diag);

/* One surface hit found by the tracer's cast: the mesh triangle and the distance along d. */
struct SurfaceHit {
    int triangle = -1;
    double distance = 0;
};

/* The next surface from p along unit d exactly as the tracer finds it, p being a point of mesh
   triangle lastTriangle (or a free point, -1); nullopt if the ray leaves the model. For
   replaying an EscapedRay in tests and diagnostics (builds the tracer's tables on each call). */
std::optional<SurfaceHit> NextSurface(const Room& room, const Vec3& p, const Vec3& d, int lastTriangle);

/* Default duration: the longest Eyring T over the bands (60 dB of decay) plus the farthest
   source-receiver direct delay; 2 s if the room has no valid volume. */
double DefaultTraceDuration(const Room& room, int source);

/* Automatic receiver radius: enough sphere cross-section that a batch of rays hits a
   receiver about 10 times per 10 ms in a diffuse field, hits/s = (N/B) c pi r^2 / V
   (ray density N/V times c times cross-section), limited to [0.1, 1] m and to a tenth of
   the mean free path 4V/S. Each seat is then clamped to 0.95 x its distance to a surface. */
double ReceiverRadius(const Room& room, int64_t rays);

/* Lateral axis for a receiver and a source: horizontal (internal frame, y up) and
   perpendicular to the source direction; x if the source is straight above or below. */
Vec3 LateralAxis(const Vec3& receiver, const Vec3& source);

/* Benchmark support: one ray cast as handed to Embree (float origin and unit direction). */
struct RawCast {
    float org[3], dir[3];
};

/* The first casts (at most maxCasts) of the segments of a trace of `source`, in ray order,
   traced single-threaded without receivers; for comparing against bare Embree throughput. */
std::vector<RawCast> CollectCasts(const Room& room, int source, const TracerOptions& options,
                                  int64_t maxCasts);

/* Casts every ray with rtcIntersect1 and nothing else (parallel over fixed blocks); returns
   the number of hits. */
int64_t CastRaw(const Room& room, const std::vector<RawCast>& casts);

}  // namespace hallwright
