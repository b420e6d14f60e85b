#pragma once
// Propagation results handed from the image-source and ray-tracing stages to synthesis and
// parameters. Energy units (both stages): a unit-energy omnidirectional source gives the
// energy 1/(4 pi r^2) at distance r in free field (per unit area, per band, no air loss).
#include <cmath>
#include <cstdint>
#include <string>
#include <vector>

#include "hallwright/bands.h"
#include "hallwright/mesh.h"

namespace hallwright {

/* One specular path from a source to a receiver (order 0 = direct sound). */
struct SpecularPath {
    int order = 0;
    double delayS = 0;            // path length / c
    double lengthM = 0;
    Bands energy = Bands::Zero(); // per band, units above; pressure gain = sqrt(energy)
    Vec3 arrivalFrom;             // unit vector from the receiver toward where the sound comes from
    std::vector<int> faces;       // Geometry face indices, in the order the sound meets them
};

struct ReceiverPaths {
    int source = 0, receiver = 0;
    bool directOccluded = false;  // no line of sight from the source
    std::vector<SpecularPath> paths;  // sorted by delay
};

/* Histogram layout constants shared by tracer, synthesis and parameters. */
constexpr int kBatchCount = 8;             // independent ray batches (jackknife, CI95)
constexpr double kBinWidthS = 0.001;       // 1 ms energy bins
constexpr double kLateralWindowS = 0.100;  // lateral record: 0..100 ms after the direct delay
constexpr int kLateralBins = 100;          // 1 ms each
constexpr double kDirectionBinS = 0.010;   // coarse bins of the directional record
constexpr int kDirectionCells = 64;        // 8 azimuth x 8 equal-area elevation cells

/* Cell of the directional record for a unit arrival direction d (internal frame, y up):
   8 azimuth sectors of atan2(d.z, d.x) starting at -pi, times 8 elevation bands of equal
   solid angle (equal steps of d.y = sin(elevation) from -1); cell = 8 * elevation + azimuth. */
inline int DirectionCell(const Vec3& d) {
    constexpr double kPi = 3.14159265358979323846;
    int az = static_cast<int>(std::floor((std::atan2(d.z(), d.x()) + kPi) / (2 * kPi) * 8));
    int el = static_cast<int>(std::floor((d.y() + 1.0) * 0.5 * 8));
    az = az < 0 ? 0 : (az > 7 ? 7 : az);
    el = el < 0 ? 0 : (el > 7 ? 7 : el);
    return el * 8 + az;
}

/* Number of coarse bins (kDirectionBinS) of the directional record for `binCount` 1 ms bins. */
inline int DirectionBinCount(int binCount) {
    return static_cast<int>(std::ceil(binCount * kBinWidthS / kDirectionBinS - 1e-9));
}

/* The tracer's part for one (source, receiver); the specular paths are NOT included. */
struct ReceiverHistogram {
    int source = 0, receiver = 0;
    int binCount = 0;                 // time bins of kBinWidthS from t = 0 (emission)
    double directDelayS = 0;          // |S - R| / c, origin of the lateral record
    /* energy[(batch * binCount + bin) * kBandCount + band]; each batch scaled as a full
       estimate (the mean over batches is the all-ray estimate). */
    std::vector<float> energy;
    /* Lateral record, [(batch * kLateralBins + lbin) * kBandCount + band]: energy times
       (d.a)^2 and |d.a| for the lateral axis a (horizontal, perpendicular to the source
       direction), lbin counted from directDelayS. */
    std::vector<float> lateralSq, lateralAbs;
    /* Directional record over all batches, [(coarseBin * kDirectionCells + cell)]: energy
       summed over the 125 Hz - 4 kHz bands, arrival direction cells (internal frame). */
    std::vector<float> directionEnergy;

    double Energy(int batch, int bin, int band) const {
        return energy[(static_cast<size_t>(batch) * binCount + bin) * kBandCount + band];
    }
};

}  // namespace hallwright

namespace hallwright {

/* Adds a further round of rays to a histogram: each batch becomes the ray-weighted mean of
   the two rounds' batches (both are full estimates), as are the lateral and directional
   records, so B stays the same and the batches stay independent. Same binCount required
   (returns false otherwise and leaves `total` unchanged). */
bool MergeTracerRound(ReceiverHistogram& total, int64_t totalRays, const ReceiverHistogram& round,
                      int64_t roundRays);

}  // namespace hallwright
