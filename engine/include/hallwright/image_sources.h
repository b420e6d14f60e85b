#pragma once
// Image sources: the exact specular paths (direct sound and reflections up to the image order)
// from one source to every receiver, over the planar faces of the geometry.
//
// Method. An image source of order k is the source mirrored successively in the planes of the
// faces f1..fk (Allen & Berkley 1979; Borish 1984 for arbitrary polyhedra). An image is kept
// only when the previous image lies on the reflecting side of the next plane (Borish's
// validity test) and the next face has some part on the reflecting side of the previous one.
// For each receiver every image is then checked exactly, in double precision: walking back
// from the receiver, each reflection point (the crossing of the line to the image with the
// plane) must lie inside its face (tested against the face's triangles), the points must be
// on the reflecting side of every plane, and every leg must be free (Embree occlusion query,
// ends moved off the reflecting faces by a small offset so those faces do not block).
//
// Which image sequences are examined:
//  - exhaustive: every face sequence up to the order without an immediate repeat (the image
//    tree of Borish 1984, pruned only by the two exact conditions above);
//  - accelerated (default), after Vorländer 1989: `searchRays` rays leave the source in the
//    deterministic directions of a Fibonacci sphere and are reflected specularly up to the
//    order; every face sequence a ray visits (and each of its prefixes) becomes a candidate.
//    The candidates of one source are pooled, shared by all receivers, and validated exactly
//    for each receiver as above. A sequence whose beam is narrower than the ray spacing
//    (4 pi / searchRays sr) can be missed. Such beams are mostly cut by an edge (a floor strip
//    in front of a reveal, a side aisle beside a wall, a corner), so the tree is completed:
//    all first-order images, and below every node the reflections off the faces that touch
//    its face (share a vertex), down to the order. Every accelerated path is also an
//    exhaustive one, with identical numbers.
//    When the whole image tree has at most `fullEnumerationLimit` images (rooms of a few
//    dozen faces at order 3), it is enumerated instead: exact, and cheaper than the search.
//
// Energy of a path of length d (units of propagation.h, unit-energy source):
//   E = prod over its reflections of (1 - alpha)(1 - s)  x  e^(-m d)  /  (4 pi d^2)
// i.e. the specular pressure gain sqrt((1 - alpha)(1 - s)) per reflection squared (the
// scattered share belongs to the ray tracer), ISO 9613-1 air loss m at the exact midbands
// (air.h) and spherical spreading. Paths with zero energy in every band (alpha = 1 or s = 1
// on a face) are left out. Faces of open panels (zero-thickness surfaces that are not part of
// a closed shell) reflect on both sides; all other faces only on the side their normal faces.
#include <cstdint>
#include <vector>

#include "hallwright/diagnostics.h"
#include "hallwright/geometry.h"
#include "hallwright/propagation.h"
#include "hallwright/room.h"
#include "hallwright/scene.h"

namespace hallwright {

/* Highest image order accepted (exhaustive enumeration is refused long before this). */
constexpr int kMaxImageOrder = 10;

struct ImageSourceOptions {
    int order = 3;                    // highest reflection order (0 = direct sound only)
    bool exhaustive = false;          // full enumeration instead of the ray-guided search
    int64_t searchRays = 200000;      // accelerated: rays cast from the source
    bool completeAdjacent = true;     // accelerated: complete the tree by touching faces
    int64_t fullEnumerationLimit = 20000;  // accelerated: enumerate trees up to this size (0: never)
    bool airAbsorption = true;        // ISO 9613-1 air loss along each path
    int64_t maxImages = 5000000;      // exhaustive: refuse larger image trees (~40 bytes each)
};

/* Counts from one run (summed over receivers in a fixed order), for benchmarks and notes. */
struct ImageSourceStats {
    bool enumeratedFully = false;  // the full image tree was used
    int64_t searchRays = 0;        // rays cast by the accelerated search
    int64_t images = 0;            // valid image sources of the source (tree nodes)
    int64_t pathChecks = 0;        // (image, receiver) pairs examined
    int64_t occlusionQueries = 0;  // Embree occlusion queries
    int64_t paths = 0;             // paths kept, all receivers, direct sounds included
};

/* Options from the scene settings (image order); accelerated search. */
ImageSourceOptions ImageSourceOptionsFrom(const SimulationSettings& settings);

/* Specular paths from scene.sources[source] to the receivers with the given indices (all
   receivers when `receivers` is empty), one ReceiverPaths per receiver in that order.
   Parallel over receivers (oneTBB); the result does not depend on the thread count. Bad
   options go to diag and give an empty result. */
std::vector<ReceiverPaths> ComputeImageSources(const Scene& scene, const Geometry& geometry, int source,
                                               const std::vector<int>& receivers,
                                               const ImageSourceOptions& options, Diagnostics& diag,
                                               ImageSourceStats* stats = nullptr);

/* Same for every receiver of a loaded room. */
std::vector<ReceiverPaths> ComputeImageSources(const Room& room, int source, const ImageSourceOptions& options,
                                               Diagnostics& diag, ImageSourceStats* stats = nullptr);

/* Every source and every receiver of a room ([source][receiver]), e.g. for the `image-sources`
   benchmark; `stats` gets the counts summed over the sources (enumeratedFully: all of them). */
std::vector<std::vector<ReceiverPaths>> ComputeImageSourcesAllSources(const Room& room,
                                                                      const ImageSourceOptions& options,
                                                                      Diagnostics& diag,
                                                                      ImageSourceStats* stats = nullptr);

}  // namespace hallwright
