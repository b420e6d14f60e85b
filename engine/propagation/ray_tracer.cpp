// Stochastic ray tracer: the scattered and late part of the hybrid (see ray_tracer.h for the
// physics, the band splitting and the receiver estimator).
//
// Robustness at edges and corners (no leaks): Embree works in float, so an origin rounded to
// float can lie a few micrometres beyond a neighbouring wall. The tracer keeps positions in
// double, exactly on the plane of the triangle last hit, and uses the room-facing normal of
// every one-sided triangle (Face::normal, oriented into the room by Geometry::Build):
//   1. First cast from p + eps * n_out. In a closed, consistently oriented room the first
//      surface met from inside is always met from its room side ("front-facing"); such a hit
//      is accepted.
//   2. A back-facing first hit or a miss means the float origin was outside (parity of a
//      closed surface). The fallback casts again from p - backoff * d, with backoff well above
//      the float error, and accepts the first front-facing hit at any t (a front-facing
//      surface just behind p means p itself was outside it, so reflecting there is the
//      correction); back-facing hits are skipped by re-casting past them.
//   3. Acute corners: a hit within float error of an edge is clamped onto the edge. If the
//      two faces meeting there enclose less than 90 degrees and the reflected direction runs
//      into the neighbouring face, p + eps * n_out lies outside that face and the line through
//      p touches the room only at p (tangent to the corner from outside): both casts miss.
//      Before such a ray is counted as escaped, the triangles sharing a vertex with the face
//      just left are tested in double precision; a one-sided one that d enters from its room
//      side and whose triangle passes within eps of p is hit at p (distance 0). Only rays that
//      would otherwise escape take this path, so every other ray is traced exactly as before.
// Triangles with an edge not shared by exactly two triangles (thin panels, openings) are
// two-sided: they reflect from both sides and are accepted when their plane lies ahead of p
// in double precision and they are not the face just left.
#include "hallwright/ray_tracer.h"

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <limits>
#include <map>
#include <memory>
#include <sstream>
#include <unordered_map>

#include <embree3/rtcore.h>
#include <oneapi/tbb/parallel_for.h>
#include <oneapi/tbb/parallel_pipeline.h>
#include <pcg_random.hpp>

#include "hallwright/air.h"
#include "hallwright/room_acoustics.h"
#include "propagation/receiver_grid.h"

namespace hallwright {
namespace {

constexpr double kPi = 3.14159265358979323846;
constexpr int64_t kRaysPerChunk = 256;

/* A length for messages: two decimals ("1.00"). */
std::string FormatMetres(double m) {
    char buf[32];
    std::snprintf(buf, sizeof buf, "%.2f", m);
    return buf;
}  // fixed, never derived from the thread count
constexpr int kMaxSubRays = kBandCount;  // a split partitions the bands: at most 8 alive
constexpr int kMaxFallbackCasts = 16;
constexpr double kAirStepM = 0.1;
constexpr int kMergeBlocks = 32;  // receiver blocks merged in parallel
constexpr size_t kMergeGroup = 8; // chunks merged together

/* Fills the air table of `m` for distances up to maxDist. */
void BuildAirTable(double airM[kBandCount], double maxDist, std::vector<float>& table) {
    const size_t n = static_cast<size_t>(std::ceil(std::max(maxDist, 0.0) / kAirStepM)) + 2;
    table.resize(n * kBandCount);
    for (size_t i = 0; i < n; ++i)
        for (int b = 0; b < kBandCount; ++b)
            table[i * kBandCount + b] = static_cast<float>(std::exp(-airM[b] * kAirStepM * static_cast<double>(i)));
}

/* SplitMix64 finaliser (Steele, Lea & Flood 2014), used as a hash for stream keys. */
uint64_t Mix64(uint64_t x) {
    x += 0x9E3779B97F4A7C15ull;
    x = (x ^ (x >> 30)) * 0xBF58476D1CE4E5B9ull;
    x = (x ^ (x >> 27)) * 0x94D049BB133111EBull;
    return x ^ (x >> 31);
}

/* The random stream of one ray depends only on (seed, source, ray index). */
pcg32 RayRng(uint64_t seed, int source, int64_t ray) {
    uint64_t key = Mix64(seed ^ Mix64(0x5EEDull + static_cast<uint64_t>(source)));
    return pcg32(Mix64(key ^ Mix64(static_cast<uint64_t>(ray))), key);
}

SourceLoc FileLoc(const std::string& file) {
    SourceLoc at;
    at.file = file;
    return at;
}

inline double Uniform(pcg32& rng) { return rng() * (1.0 / 4294967296.0); }

/* Orthonormal basis around a unit normal (Duff et al. 2017, "Building an orthonormal basis,
   revisited", JCGT 6(1)). */
inline void Basis(const Vec3& n, Vec3& t, Vec3& b) {
    double sign = std::copysign(1.0, n.z());
    double a = -1.0 / (sign + n.z());
    double bb = n.x() * n.y() * a;
    t = Vec3(1.0 + sign * n.x() * n.x() * a, sign * bb, -sign * n.x());
    b = Vec3(bb, sign + n.y() * n.y() * a, -n.y());
}

/* Lambert (cosine) direction around unit normal n: ideal diffuse reflection (ISO 17497-1
   scattered share; Kuttruff, Room Acoustics, ch. 4 on Lambert's law). */
inline Vec3 LambertDirection(const Vec3& n, pcg32& rng) {
    double u1 = Uniform(rng), u2 = Uniform(rng);
    double r = std::sqrt(u1), phi = 2 * kPi * u2;
    Vec3 t, b;
    Basis(n, t, b);
    Vec3 d = t * (r * std::cos(phi)) + b * (r * std::sin(phi)) + n * std::sqrt(std::max(0.0, 1 - u1));
    return d.normalized();
}

inline Vec3 UniformSphere(pcg32& rng) {
    double z = 1 - 2 * Uniform(rng), phi = 2 * kPi * Uniform(rng);
    double r = std::sqrt(std::max(0.0, 1 - z * z));
    return Vec3(r * std::cos(phi), r * std::sin(phi), z);
}

/* Per-triangle data for the hot loop, flat. */
struct TriangleData {
    Vec3 v0, v1, v2;   // corners (double), to keep hit points on the triangle
    double n[3];       // room-facing unit normal of the triangle's own plane
    double offset;     // plane n . x = offset
    int material;
    int face;
    bool twoSided;
};

struct MaterialData {
    double alpha[kBandCount];
    double scatter[kBandCount];
};

struct Model {
    RTCScene scene = nullptr;
    std::vector<TriangleData> triangles;
    /* Triangles sharing a welded vertex with triangle i: neighbours[neighbourStart[i] ..
       neighbourStart[i + 1]), ascending (the acute-corner test, step 3 above). */
    std::vector<uint32_t> neighbourStart, neighbours;
    std::vector<MaterialData> materials;
    double eps = 1e-5, backoff = 1e-4;
    double airM[kBandCount] = {};
    /* e^(-m d) per band at d = i * kAirStepM, [i * kBandCount + band], linearly interpolated
       (relative error < (m h)^2 / 8 = 2e-6 at 8 kHz) for segments and receiver scores; the
       bookkeeping stays exact since the air share is e - kept. */
    std::vector<float> airTable;
    double c = 343.2;
};

/* One scored receiver crossing, kept in chunk-local lists and merged in chunk order. */
struct HitRecord {
    uint32_t receiver;  // index into the histograms
    int32_t bin;        // 1 ms bin from emission
    int32_t coarseBin;  // bin of the directional record
    int16_t lateralBin; // 1 ms bin from the direct delay, -1 outside the lateral window
    uint8_t batch;
    uint8_t cell;       // directional cell of the arrival direction
    float cosLateral;   // cosine between the arrival direction and the lateral axis
    float energy[kBandCount];  // all-ray estimate share (not yet scaled by kBatchCount)
};

struct ChunkOut {
    std::vector<HitRecord> hits;
    double absorbed[kBandCount] = {}, air[kBandCount] = {}, escaped[kBandCount] = {},
           remaining[kBandCount] = {}, emitted[kBandCount] = {};
    int64_t subRays = 0, segments = 0, reflections = 0, escapedRays = 0, fallbackCasts = 0, cornerHits = 0;
    std::vector<EscapedRay> escapedSamples;
    std::vector<RawCast>* casts = nullptr;  // benchmark only: first casts of each segment
    std::vector<uint32_t> blockStart;       // hits grouped by receiver block (see TraceSource)
};

struct SubRay {
    Vec3 p, d;
    double e[kBandCount];
    double dist;       // metres travelled
    int order;         // reflections so far
    int lastTri;       // -1 at the source
    uint8_t mask;      // bands carried
    bool diffuse;      // has had a Lambert event
};

/* Welded vertex ids by position (micrometre grid). */
std::vector<uint32_t> WeldByPosition(const Mesh& mesh) {
    struct KeyHash {
        size_t operator()(const std::array<int64_t, 3>& k) const {
            return Mix64(static_cast<uint64_t>(k[0]) ^ Mix64(static_cast<uint64_t>(k[1]) ^
                                                            Mix64(static_cast<uint64_t>(k[2]))));
        }
    };
    std::unordered_map<std::array<int64_t, 3>, uint32_t, KeyHash> ids;
    std::vector<uint32_t> weld(mesh.vertices.size());
    for (size_t i = 0; i < mesh.vertices.size(); ++i) {
        const Vec3& v = mesh.vertices[i];
        std::array<int64_t, 3> key = {std::llround(v.x() * 1e6), std::llround(v.y() * 1e6),
                                      std::llround(v.z() * 1e6)};
        auto [it, inserted] = ids.emplace(key, static_cast<uint32_t>(ids.size()));
        weld[i] = it->second;
    }
    return weld;
}

/* Marks triangles with an edge that is not shared by exactly two triangles (thin panels,
   openings, T-junctions) as two-sided. */
std::vector<bool> TwoSidedTriangles(const Mesh& mesh, const std::vector<uint32_t>& weld) {
    std::map<std::pair<uint32_t, uint32_t>, int> edgeUse;
    auto edge = [&](uint32_t a, uint32_t b) {
        a = weld[a];
        b = weld[b];
        return a < b ? std::make_pair(a, b) : std::make_pair(b, a);
    };
    for (const auto& t : mesh.triangles)
        for (int k = 0; k < 3; ++k) ++edgeUse[edge(t[k], t[(k + 1) % 3])];
    std::vector<bool> twoSided(mesh.TriangleCount(), false);
    for (size_t i = 0; i < mesh.TriangleCount(); ++i) {
        const auto& t = mesh.triangles[i];
        for (int k = 0; k < 3; ++k)
            if (edgeUse[edge(t[k], t[(k + 1) % 3])] != 2) twoSided[i] = true;
    }
    return twoSided;
}

/* Fills the neighbour lists of `m`: per triangle, the other triangles using one of its welded
   vertices, ascending. */
void BuildNeighbours(const Mesh& mesh, const std::vector<uint32_t>& weld, Model& m) {
    const size_t nTri = mesh.TriangleCount();
    std::vector<std::vector<uint32_t>> byVertex(mesh.vertices.size());
    for (size_t i = 0; i < nTri; ++i)
        for (uint32_t v : mesh.triangles[i]) byVertex[weld[v]].push_back(static_cast<uint32_t>(i));
    m.neighbourStart.assign(nTri + 1, 0);
    m.neighbours.clear();
    std::vector<uint32_t> list;
    for (size_t i = 0; i < nTri; ++i) {
        list.clear();
        for (uint32_t v : mesh.triangles[i])
            for (uint32_t u : byVertex[weld[v]])
                if (u != i) list.push_back(u);
        std::sort(list.begin(), list.end());
        list.erase(std::unique(list.begin(), list.end()), list.end());
        m.neighbours.insert(m.neighbours.end(), list.begin(), list.end());
        m.neighbourStart[i + 1] = static_cast<uint32_t>(m.neighbours.size());
    }
}

Model BuildModel(const Room& room, const TracerOptions& options) {
    const Mesh& mesh = room.geometry.GetMesh();
    const auto& faces = room.geometry.Faces();
    const auto& triFace = room.geometry.TriangleFace();
    Model m;
    m.scene = static_cast<RTCScene>(room.geometry.Rays().NativeScene());
    const std::vector<uint32_t> weld = WeldByPosition(mesh);
    std::vector<bool> twoSided = TwoSidedTriangles(mesh, weld);
    BuildNeighbours(mesh, weld, m);
    m.triangles.resize(mesh.TriangleCount());
    for (size_t i = 0; i < mesh.TriangleCount(); ++i) {
        TriangleData& t = m.triangles[i];
        Vec3 n = mesh.TriangleCross(i);
        double len = n.norm();
        n = len > 0 ? Vec3(n / len) : Vec3(0, 1, 0);
        int face = i < triFace.size() ? triFace[i] : -1;
        if (face >= 0 && face < static_cast<int>(faces.size()) && n.dot(faces[face].normal) < 0) n = -n;
        t.n[0] = n.x();
        t.n[1] = n.y();
        t.n[2] = n.z();
        t.offset = n.dot(mesh.Vertex(i, 0));
        t.v0 = mesh.Vertex(i, 0);
        t.v1 = mesh.Vertex(i, 1);
        t.v2 = mesh.Vertex(i, 2);
        t.material = mesh.triangleMaterial.empty() ? 0 : mesh.triangleMaterial[i];
        t.face = face >= 0 ? face : static_cast<int>(i) + static_cast<int>(faces.size());
        t.twoSided = twoSided[i];
    }
    for (const Material& mat : room.scene.materials) {
        MaterialData md;
        for (int b = 0; b < kBandCount; ++b) {
            md.alpha[b] = std::clamp(mat.absorption[b], 0.0, 1.0);
            md.scatter[b] = std::clamp(mat.scattering[b], 0.0, 1.0);
        }
        m.materials.push_back(md);
    }
    if (m.materials.empty()) m.materials.push_back(MaterialData{});
    Vec3 extent = room.geometry.BoundsMax() - room.geometry.BoundsMin();
    double scale = std::max({extent.cwiseAbs().maxCoeff(), room.geometry.BoundsMax().cwiseAbs().maxCoeff(),
                             room.geometry.BoundsMin().cwiseAbs().maxCoeff(), 1.0});
    // Float spacing at this coordinate scale is scale * 1.2e-7; the origin offset stays ~16x
    // above it and the fallback's back-off ten times further.
    m.eps = 2e-6 * scale;
    m.backoff = 10 * m.eps;
    m.c = SpeedOfSound(room.scene.air.temperatureC);
    if (options.airAbsorption) {
        Bands air = AirEnergyAttenuationPerM(room.scene.air);
        for (int b = 0; b < kBandCount; ++b) m.airM[b] = air[b];
    }
    return m;
}

/* Closest point of triangle (a, b, c) to p (Ericson, Real-Time Collision Detection, 5.1.5). */
Vec3 ClosestPointOnTriangle(const Vec3& p, const Vec3& a, const Vec3& b, const Vec3& c) {
    const Vec3 ab = b - a, ac = c - a, ap = p - a;
    const double d1 = ab.dot(ap), d2 = ac.dot(ap);
    if (d1 <= 0 && d2 <= 0) return a;
    const Vec3 bp = p - b;
    const double d3 = ab.dot(bp), d4 = ac.dot(bp);
    if (d3 >= 0 && d4 <= d3) return b;
    const double vc = d1 * d4 - d3 * d2;
    if (vc <= 0 && d1 >= 0 && d3 <= 0) return a + ab * (d1 / (d1 - d3));
    const Vec3 cp = p - c;
    const double d5 = ab.dot(cp), d6 = ac.dot(cp);
    if (d6 >= 0 && d5 <= d6) return c;
    const double vb = d5 * d2 - d1 * d6;
    if (vb <= 0 && d2 >= 0 && d6 <= 0) return a + ac * (d2 / (d2 - d6));
    const double va = d3 * d6 - d5 * d4;
    if (va <= 0 && (d4 - d3) >= 0 && (d5 - d6) >= 0) return b + (c - b) * ((d4 - d3) / ((d4 - d3) + (d5 - d6)));
    const double denom = 1.0 / (va + vb + vc);
    return a + ab * (vb * denom) + ac * (vc * denom);
}

/* e^(-m_b d) for every band from the air table (linear interpolation; d <= the table's end). */
inline void AirFactors(const Model& m, double d, double out[kBandCount]) {
    const double x = d * (1.0 / kAirStepM);
    const size_t i = static_cast<size_t>(x);
    const double f = x - static_cast<double>(i);
    const float* a0 = &m.airTable[i * kBandCount];
    for (int b = 0; b < kBandCount; ++b) out[b] = a0[b] + f * (a0[b + kBandCount] - a0[b]);
}

struct CastResult {
    bool found = false;
    double s = 0;   // distance from p along d to the hit plane (double)
    int tri = -1;
};

inline void FillRay(RTCRayHit& rh, const Vec3& o, const Vec3& d, float tnear) {
    rh.ray.org_x = static_cast<float>(o.x());
    rh.ray.org_y = static_cast<float>(o.y());
    rh.ray.org_z = static_cast<float>(o.z());
    rh.ray.dir_x = static_cast<float>(d.x());
    rh.ray.dir_y = static_cast<float>(d.y());
    rh.ray.dir_z = static_cast<float>(d.z());
    rh.ray.tnear = tnear;
    rh.ray.tfar = std::numeric_limits<float>::infinity();
    rh.ray.time = 0;
    rh.ray.mask = 0xFFFFFFFFu;
    rh.ray.id = 0;
    rh.ray.flags = 0;
    rh.hit.geomID = RTC_INVALID_GEOMETRY_ID;
    rh.hit.instID[0] = RTC_INVALID_GEOMETRY_ID;
}

inline double PlaneDistanceAlong(const TriangleData& t, const Vec3& p, const Vec3& d, double fallback) {
    double nd = t.n[0] * d.x() + t.n[1] * d.y() + t.n[2] * d.z();
    if (std::abs(nd) < 1e-12) return fallback;
    return (t.offset - (t.n[0] * p.x() + t.n[1] * p.y() + t.n[2] * p.z())) / nd;
}

inline double FacingDot(const TriangleData& t, const Vec3& d) {
    return t.n[0] * d.x() + t.n[1] * d.y() + t.n[2] * d.z();
}

/* Step 3 of the robustness note: a ray that both casts lost, leaving triangle `fromTri` from
   a point p on an edge or corner of an acute room corner, hits the neighbouring face there. */
CastResult CornerHit(const Model& m, const Vec3& p, const Vec3& d, int fromTri) {
    CastResult best;
    if (fromTri < 0) return best;
    double bestGap = m.eps;  // p must lie within eps of the neighbour triangle
    for (uint32_t k = m.neighbourStart[fromTri]; k < m.neighbourStart[fromTri + 1]; ++k) {
        const TriangleData& t = m.triangles[m.neighbours[k]];
        // One-sided faces only (a closed room's walls), entered from their room side, with p
        // on their plane or behind it (outside), at most eps in front.
        if (t.twoSided || !(FacingDot(t, d) < 0)) continue;
        const double s = std::max(PlaneDistanceAlong(t, p, d, 0.0), 0.0);
        if (s * -FacingDot(t, d) > m.eps) continue;
        const double gap = (ClosestPointOnTriangle(p, t.v0, t.v1, t.v2) - p).norm();
        if (gap <= bestGap) {
            if (gap == bestGap && best.found) continue;  // ties: the lowest triangle index
            bestGap = gap;
            best = {true, s, static_cast<int>(m.neighbours[k])};
        }
    }
    return best;
}

/* Next surface from p along d, leaving triangle `fromTri` on the side `nOut` (see the
   robustness note at the top of this file). */
CastResult NextHit(const Model& m, const Vec3& p, const Vec3& d, int fromTri, const Vec3& nOut,
                   int64_t& fallbackCasts, int64_t& cornerHits, std::vector<RawCast>* casts) {
    RTCIntersectContext ctx;
    RTCRayHit rh;
    const int fromFace = fromTri >= 0 ? m.triangles[fromTri].face : -1;
    // First cast from the offset origin.
    {
        Vec3 o = fromTri >= 0 ? Vec3(p + nOut * m.eps) : p;
        rtcInitIntersectContext(&ctx);
        FillRay(rh, o, d, 0.0f);
        if (casts)
            casts->push_back({{rh.ray.org_x, rh.ray.org_y, rh.ray.org_z}, {rh.ray.dir_x, rh.ray.dir_y, rh.ray.dir_z}});
        rtcIntersect1(m.scene, &ctx, &rh);
        if (rh.hit.geomID != RTC_INVALID_GEOMETRY_ID) {
            const TriangleData& t = m.triangles[rh.hit.primID];
            double s = PlaneDistanceAlong(t, p, d, rh.ray.tfar);
            bool accept = t.twoSided ? (t.face != fromFace && s > 0) : (FacingDot(t, d) < 0);
            if (accept) return {true, std::max(s, 0.0), static_cast<int>(rh.hit.primID)};
        }
    }
    // Fallback: the origin was (numerically) outside; cast from behind p.
    ++fallbackCasts;
    Vec3 o = p - d * m.backoff;
    float tnear = 0.0f;
    for (int k = 0; k < kMaxFallbackCasts; ++k) {
        rtcInitIntersectContext(&ctx);
        FillRay(rh, o, d, tnear);
        rtcIntersect1(m.scene, &ctx, &rh);
        if (rh.hit.geomID == RTC_INVALID_GEOMETRY_ID) break;
        const TriangleData& t = m.triangles[rh.hit.primID];
        double s = PlaneDistanceAlong(t, p, d, rh.ray.tfar - m.backoff);
        bool accept = t.twoSided ? (t.face != fromFace && s > 0) : (FacingDot(t, d) < 0);
        if (accept) return {true, std::max(s, 0.0), static_cast<int>(rh.hit.primID)};
        tnear = std::nextafter(rh.ray.tfar, std::numeric_limits<float>::infinity());
    }
    // Both casts lost the ray: an acute corner, or a real opening.
    CastResult corner = CornerHit(m, p, d, fromTri);
    cornerHits += corner.found;
    return corner;
}

struct ScoredReceiver {
    Vec3 position;
    double radius, invVolume, directDelayS;
    Vec3 lateralAxis;
};

/* Traces rays [first, last) of one source into `out`. */
void TraceChunk(const Model& m, const ReceiverGrid& grid, const ScoredReceiver* receivers,
                const TracerOptions& opt, int source,
                const Vec3& sourcePos, int64_t first, int64_t last, double maxDist,
                std::vector<uint64_t>& stamp, uint64_t& stampId, ChunkOut& out) {
    const double e0 = 1.0 / static_cast<double>(opt.rays);
    const double invC = 1.0 / m.c;
    std::array<SubRay, kMaxSubRays> stack;
    for (int64_t ray = first; ray < last; ++ray) {
        pcg32 rng = RayRng(opt.seed, source, ray);
        const uint32_t batch = static_cast<uint32_t>(ray % kBatchCount);
        int top = 0;
        SubRay& r0 = stack[top++];
        r0.p = sourcePos;
        r0.d = UniformSphere(rng);
        for (int b = 0; b < kBandCount; ++b) {
            r0.e[b] = (opt.bandMask >> b) & 1 ? e0 : 0.0;
            out.emitted[b] += r0.e[b];
        }
        r0.dist = 0;
        r0.order = 0;
        r0.lastTri = -1;
        r0.mask = opt.bandMask;
        r0.diffuse = false;
        Vec3 nOut = Vec3::Zero();
        while (top > 0) {
            SubRay r = stack[--top];
            ++out.subRays;
            nOut = Vec3::Zero();
            if (r.lastTri >= 0) {
                const TriangleData& t = m.triangles[r.lastTri];
                nOut = Vec3(t.n[0], t.n[1], t.n[2]);
                if (nOut.dot(r.d) < 0) nOut = -nOut;
            }
            for (;;) {
                double left = maxDist - r.dist;
                bool alive = false;
                for (int b = 0; b < kBandCount; ++b) alive |= r.e[b] > 0;
                if (left <= 0 || !alive) {
                    for (int b = 0; b < kBandCount; ++b) out.remaining[b] += r.e[b];
                    break;
                }
                CastResult hit = NextHit(m, r.p, r.d, r.lastTri, nOut, out.fallbackCasts, out.cornerHits, out.casts);
                ++out.segments;
                const double segLen = hit.found ? std::min(hit.s, left) : left;
                // Score the receivers this segment crosses (hybrid rule in ray_tracer.h).
                if (grid.Size() > 0 && (opt.recordAll || r.diffuse || r.order > opt.imageOrder)) {
                    ++stampId;
                    int cell = -1;  // same for every receiver of the segment, found on first use
                    const Vec3 arrival = -r.d;
                    grid.Visit(r.p, r.d, segLen, stamp, stampId, [&](uint32_t rec, double tMid, double chord) {
                        HitRecord h;
                        const double timeS = (r.dist + tMid) * invC;
                        h.receiver = rec;
                        h.bin = static_cast<int32_t>(timeS / kBinWidthS);
                        h.coarseBin = static_cast<int32_t>(timeS / kDirectionBinS);
                        // Chord centres of the direct sound lie up to r^2/(2 D) closer than the
                        // sphere centre, so arrivals up to r/c early count in the first bin.
                        const double lt = timeS - receivers[rec].directDelayS;
                        h.lateralBin = lt >= -receivers[rec].radius * invC && lt < kLateralWindowS
                                           ? static_cast<int16_t>(std::min(kLateralBins - 1,
                                                                           static_cast<int>(std::max(lt, 0.0) / kBinWidthS)))
                                           : int16_t(-1);
                        h.batch = static_cast<uint8_t>(batch);
                        if (cell < 0) cell = DirectionCell(arrival);
                        h.cell = static_cast<uint8_t>(cell);
                        h.cosLateral = static_cast<float>(arrival.dot(receivers[rec].lateralAxis));
                        // Track-length score E chord / V with the air loss up to the chord centre.
                        const double w = chord * grid.InvVolume(rec);
                        const double x = tMid * (1.0 / kAirStepM);
                        const size_t i = static_cast<size_t>(x);
                        const float f = static_cast<float>(x - static_cast<double>(i));
                        const float* a0 = &m.airTable[i * kBandCount];
                        for (int b = 0; b < kBandCount; ++b)
                            h.energy[b] = static_cast<float>(r.e[b] * w) * (a0[b] + f * (a0[b + kBandCount] - a0[b]));
                        out.hits.push_back(h);
                    });
                }
                if (!hit.found) {
                    for (int b = 0; b < kBandCount; ++b) out.escaped[b] += r.e[b];
                    ++out.escapedRays;
                    if (opt.keepEscapedRays && out.escapedSamples.size() < kMaxEscapedRecords)
                        out.escapedSamples.push_back({r.p, r.d, ray, r.lastTri});
                    break;
                }
                if (hit.s >= left) {  // the duration ends inside this segment
                    double airLeft[kBandCount];
                    AirFactors(m, left, airLeft);
                    for (int b = 0; b < kBandCount; ++b) {
                        double kept = r.e[b] * airLeft[b];
                        out.air[b] += r.e[b] - kept;
                        out.remaining[b] += kept;
                    }
                    break;
                }
                // Air absorption along the segment, then absorption at the surface.
                const TriangleData& tri = m.triangles[hit.tri];
                const MaterialData& mat = m.materials[tri.material];
                double airSeg[kBandCount];
                AirFactors(m, hit.s, airSeg);
                for (int b = 0; b < kBandCount; ++b) {
                    double kept = r.e[b] * airSeg[b];
                    out.air[b] += r.e[b] - kept;
                    double absorbed = kept * mat.alpha[b];
                    out.absorbed[b] += absorbed;
                    r.e[b] = kept - absorbed;
                }
                // The hit point is kept on the hit triangle in double precision, so it never
                // lies outside the room's closure (the float ray may have crossed a corner).
                r.p = ClosestPointOnTriangle(r.p + r.d * hit.s, tri.v0, tri.v1, tri.v2);
                r.dist += hit.s;
                r.lastTri = hit.tri;
                ++r.order;
                ++out.reflections;
                Vec3 n(tri.n[0], tri.n[1], tri.n[2]);
                if (n.dot(r.d) > 0) n = -n;  // incoming side (two-sided faces; fix-ups)
                const Vec3 specular = r.d - n * (2 * r.d.dot(n));
                const double u = Uniform(rng);
                if (opt.sampling == ReflectionSampling::kBandSplit) {
                    uint8_t diffuseMask = 0;
                    for (int b = 0; b < kBandCount; ++b)
                        if (((r.mask >> b) & 1) && u < mat.scatter[b]) diffuseMask |= uint8_t(1u << b);
                    const uint8_t specMask = r.mask & ~diffuseMask;
                    if (diffuseMask != 0 && specMask != 0) {
                        // Split: the specular bands go on a sub-ray of their own.
                        SubRay child = r;
                        child.d = specular;
                        child.mask = specMask;
                        for (int b = 0; b < kBandCount; ++b)
                            if (!((specMask >> b) & 1)) child.e[b] = 0;
                        for (int b = 0; b < kBandCount; ++b)
                            if (!((diffuseMask >> b) & 1)) r.e[b] = 0;
                        r.mask = diffuseMask;
                        HW_CHECK(top < kMaxSubRays, "band-split stack overflow");
                        stack[top++] = child;
                    }
                    if (diffuseMask != 0) {
                        r.d = LambertDirection(n, rng);
                        r.diffuse = true;
                    } else {
                        r.d = specular;
                    }
                } else {
                    // One choice for all bands, probability = mean scattering, per-band weights.
                    double pSum = 0;
                    int count = 0;
                    for (int b = 0; b < kBandCount; ++b)
                        if ((r.mask >> b) & 1) {
                            pSum += mat.scatter[b];
                            ++count;
                        }
                    double p = count ? pSum / count : 0;
                    bool goDiffuse = u < p;
                    for (int b = 0; b < kBandCount; ++b) {
                        double w = goDiffuse ? mat.scatter[b] / p : (1 - mat.scatter[b]) / (1 - p);
                        r.e[b] *= w;
                    }
                    if (goDiffuse) {
                        r.d = LambertDirection(n, rng);
                        r.diffuse = true;
                    } else {
                        r.d = specular;
                    }
                }
                nOut = n;
            }
        }
    }
}

}  // namespace

std::vector<RawCast> CollectCasts(const Room& room, int source, const TracerOptions& options,
                                  int64_t maxCasts) {
    std::vector<RawCast> casts;
    if (source < 0 || source >= static_cast<int>(room.scene.sources.size()) || options.rays <= 0) return casts;
    Model model = BuildModel(room, options);
    const double duration = options.durationS ? *options.durationS : DefaultTraceDuration(room, source);
    BuildAirTable(model.airM, duration * model.c, model.airTable);
    const ReceiverGrid noReceivers({}, {});
    std::vector<uint64_t> stamp;
    uint64_t stampId = 0;
    for (int64_t first = 0; first < options.rays && static_cast<int64_t>(casts.size()) < maxCasts;
         first += kRaysPerChunk) {
        ChunkOut out;
        out.casts = &casts;
        TraceChunk(model, noReceivers, nullptr, options, source, room.scene.sources[source].position, first,
                   std::min(options.rays, first + kRaysPerChunk), duration * model.c, stamp, stampId, out);
    }
    if (static_cast<int64_t>(casts.size()) > maxCasts) casts.resize(maxCasts);
    return casts;
}

std::optional<SurfaceHit> NextSurface(const Room& room, const Vec3& p, const Vec3& d, int lastTriangle) {
    const Model m = BuildModel(room, TracerOptions{});
    if (lastTriangle >= static_cast<int>(m.triangles.size())) return std::nullopt;
    // The side left, as in TraceChunk: the last triangle's normal turned toward d.
    Vec3 nOut = Vec3::Zero();
    if (lastTriangle >= 0) {
        const TriangleData& t = m.triangles[lastTriangle];
        nOut = Vec3(t.n[0], t.n[1], t.n[2]);
        if (nOut.dot(d) < 0) nOut = -nOut;
    }
    int64_t fallbackCasts = 0, cornerHits = 0;
    const CastResult hit = NextHit(m, p, d, lastTriangle, nOut, fallbackCasts, cornerHits, nullptr);
    if (!hit.found) return std::nullopt;
    return SurfaceHit{hit.tri, hit.s};
}

int64_t CastRaw(const Room& room, const std::vector<RawCast>& casts) {
    const RTCScene scene = static_cast<RTCScene>(room.geometry.Rays().NativeScene());
    constexpr size_t kBlock = 4096;
    const size_t blocks = (casts.size() + kBlock - 1) / kBlock;
    std::vector<int64_t> hits(blocks, 0);
    tbb::parallel_for(size_t(0), blocks, [&](size_t blk) {
        int64_t count = 0;
        for (size_t i = blk * kBlock; i < std::min(casts.size(), (blk + 1) * kBlock); ++i) {
            RTCIntersectContext ctx;
            rtcInitIntersectContext(&ctx);
            RTCRayHit rh;
            FillRay(rh, Vec3(casts[i].org[0], casts[i].org[1], casts[i].org[2]),
                    Vec3(casts[i].dir[0], casts[i].dir[1], casts[i].dir[2]), 0.0f);
            rtcIntersect1(scene, &ctx, &rh);
            count += rh.hit.geomID != RTC_INVALID_GEOMETRY_ID;
        }
        hits[blk] = count;
    });
    int64_t total = 0;
    for (int64_t h : hits) total += h;
    return total;
}

Vec3 LateralAxis(const Vec3& receiver, const Vec3& source) {
    Vec3 toSource = source - receiver;
    Vec3 a = Vec3(0, 1, 0).cross(toSource);
    if (a.norm() < 1e-9 * std::max(1.0, toSource.norm())) return Vec3(1, 0, 0);
    return a.normalized();
}

double DefaultTraceDuration(const Room& room, int source) {
    // Eyring T with air per band from the geometry stage (room_acoustics.h).
    double tMax = EstimateRoom(room.scene, room.geometry).eyringS.maxCoeff();
    if (!(tMax > 0)) return 2.0;
    const double c = SpeedOfSound(room.scene.air.temperatureC);
    double farthest = 0;
    const Vec3& s = room.scene.sources[source].position;
    for (const Receiver& r : room.scene.receivers) farthest = std::max(farthest, (r.position - s).norm());
    return std::min(tMax, 30.0) + farthest / c;
}

double ReceiverRadius(const Room& room, int64_t rays) {
    const double v = room.geometry.Volume(), s = room.geometry.SurfaceArea();
    if (v <= 0 || s <= 0 || rays <= 0) return 0.5;
    const double c = SpeedOfSound(room.scene.air.temperatureC);
    // 10 hits per batch per 10 ms: (N/B) c pi r^2 / V * 0.01 = 10.
    double r = std::sqrt(10.0 * v * kBatchCount / (static_cast<double>(rays) * c * kPi * 0.01));
    r = std::clamp(r, 0.1, 1.0);
    return std::min(r, std::max(0.1, 0.1 * 4 * v / s));
}

TracerResult TraceSource(const Room& room, int source, const TracerOptions& options,
                         Diagnostics& diag) {
    TracerResult result;
    result.source = source;
    const Scene& scene = room.scene;
    if (source < 0 || source >= static_cast<int>(scene.sources.size())) {
        diag.Error(FileLoc(scene.scenePath), "source index " + std::to_string(source) + " does not exist");
        return result;
    }
    if (options.rays <= 0) {
        diag.Error(FileLoc(scene.scenePath), "rays must be positive; set [simulation] rays = 100000");
        return result;
    }
    Model model = BuildModel(room, options);
    const Vec3 sourcePos = scene.sources[source].position;
    result.durationS = options.durationS ? *options.durationS : DefaultTraceDuration(room, source);
    const double maxDist = result.durationS * model.c;
    BuildAirTable(model.airM, maxDist, model.airTable);
    const int binCount = std::max(1, static_cast<int>(std::ceil(result.durationS / kBinWidthS - 1e-9)));
    result.receiverRadiusM = options.receiverRadiusM > 0 ? options.receiverRadiusM
                                                         : ReceiverRadius(room, options.rays);

    // Receivers: radius clamped so the sphere never reaches a surface.
    std::vector<int> chosen = options.receivers;
    if (chosen.empty())
        for (int i = 0; i < static_cast<int>(scene.receivers.size()); ++i) chosen.push_back(i);
    std::vector<ScoredReceiver> scored;
    std::vector<Vec3> centres;
    std::vector<double> radii;
    int clampedSmall = 0;
    for (int idx : chosen) {
        if (idx < 0 || idx >= static_cast<int>(scene.receivers.size())) {
            diag.Error(FileLoc(scene.scenePath), "receiver index " + std::to_string(idx) + " does not exist");
            return result;
        }
        const Receiver& rec = scene.receivers[idx];
        double dist = room.geometry.DistanceToSurface(rec.position);
        double r = std::min(result.receiverRadiusM, 0.95 * dist);
        if (r < 0.5 * result.receiverRadiusM) ++clampedSmall;
        r = std::max(r, 1e-3);
        ScoredReceiver sr;
        sr.position = rec.position;
        sr.radius = r;
        sr.invVolume = 1.0 / (4.0 / 3.0 * kPi * r * r * r);
        sr.directDelayS = (rec.position - sourcePos).norm() / model.c;
        sr.lateralAxis = LateralAxis(rec.position, sourcePos);
        scored.push_back(sr);
        centres.push_back(rec.position);
        radii.push_back(r);
        ReceiverHistogram h;
        h.source = source;
        h.receiver = idx;
        h.binCount = binCount;
        h.directDelayS = sr.directDelayS;
        h.energy.assign(static_cast<size_t>(kBatchCount) * binCount * kBandCount, 0.0f);
        h.lateralSq.assign(static_cast<size_t>(kBatchCount) * kLateralBins * kBandCount, 0.0f);
        h.lateralAbs.assign(h.lateralSq.size(), 0.0f);
        h.directionEnergy.assign(static_cast<size_t>(DirectionBinCount(binCount)) * kDirectionCells, 0.0f);
        result.histograms.push_back(std::move(h));
    }
    result.receiverRadii = radii;
    if (clampedSmall > 0)
        diag.Warning(FileLoc(scene.scenePath), std::to_string(clampedSmall) +
                                            " receiver(s) are so close to a surface that their sphere "
                                            "radius was cut below half of " +
                                            FormatMetres(result.receiverRadiusM) +
                                            " m; their histograms are noisier (move them away)");
    const ReceiverGrid grid(centres, radii);

    // Trace fixed-size chunks in parallel; merge each chunk's hit list in chunk order.
    const int64_t chunkCount = (options.rays + kRaysPerChunk - 1) / kRaysPerChunk;
    int64_t nextChunk = 0;
    double emitted[kBandCount] = {}, absorbed[kBandCount] = {}, air[kBandCount] = {},
           escaped[kBandCount] = {}, remaining[kBandCount] = {};
    const float scale = kBatchCount;
    std::vector<int> directionBins(result.histograms.size());
    for (size_t i = 0; i < result.histograms.size(); ++i)
        directionBins[i] = DirectionBinCount(result.histograms[i].binCount);
    // Receivers fall into kMergeBlocks contiguous blocks; each chunk groups its hits by block
    // (stable, so ray order is kept), and groups of kMergeGroup chunks are merged block by
    // block in parallel. Every histogram still receives its hits in chunk order, then ray
    // order, whatever the thread count: the sums are byte-identical.
    const size_t receiverCount = scored.size();
    auto blockOf = [&](uint32_t rec) { return static_cast<int>(static_cast<size_t>(rec) * kMergeBlocks / std::max<size_t>(receiverCount, 1)); };
    auto apply = [&](const HitRecord& h) {
        ReceiverHistogram& hist = result.histograms[h.receiver];
        if (h.bin < 0 || h.bin >= hist.binCount) return;
        float* e = &hist.energy[(static_cast<size_t>(h.batch) * hist.binCount + h.bin) * kBandCount];
        for (int b = 0; b < kBandCount; ++b) e[b] += h.energy[b] * scale;
        // Lateral record from the direct delay on.
        if (h.lateralBin >= 0) {
            const float cosA = h.cosLateral, cos2 = cosA * cosA, cosAbs = std::abs(cosA);
            size_t at = (static_cast<size_t>(h.batch) * kLateralBins + h.lateralBin) * kBandCount;
            for (int b = 0; b < kBandCount; ++b) {
                hist.lateralSq[at + b] += h.energy[b] * scale * cos2;
                hist.lateralAbs[at + b] += h.energy[b] * scale * cosAbs;
            }
        }
        // Directional record: all-ray estimate, 125 Hz - 4 kHz summed.
        if (h.coarseBin < directionBins[h.receiver]) {
            float sum = 0;
            for (int b = 1; b <= 6; ++b) sum += h.energy[b];
            hist.directionEnergy[static_cast<size_t>(h.coarseBin) * kDirectionCells + h.cell] += sum;
        }
    };
    std::vector<std::unique_ptr<ChunkOut>> pending;
    auto flush = [&] {
        tbb::parallel_for(0, kMergeBlocks, [&](int blk) {
            for (const auto& ch : pending)
                for (uint32_t k = ch->blockStart[blk]; k < ch->blockStart[blk + 1]; ++k) apply(ch->hits[k]);
        });
        pending.clear();
    };
    tbb::parallel_pipeline(
        8,
        tbb::make_filter<void, int64_t>(tbb::filter_mode::serial_in_order,
                                        [&](tbb::flow_control& fc) -> int64_t {
                                            if (nextChunk >= chunkCount ||
                                                (options.cancel && options.cancel->load())) {
                                                if (nextChunk < chunkCount) result.cancelled = true;
                                                fc.stop();
                                                return 0;
                                            }
                                            return nextChunk++;
                                        }) &
            tbb::make_filter<int64_t, ChunkOut*>(
                tbb::filter_mode::parallel,
                [&](int64_t chunk) -> ChunkOut* {
                    auto out = std::make_unique<ChunkOut>();
                    std::vector<uint64_t> stamp(scored.size(), 0);
                    uint64_t stampId = 0;
                    int64_t first = chunk * kRaysPerChunk;
                    int64_t last = std::min(options.rays, first + kRaysPerChunk);
                    TraceChunk(model, grid, scored.data(), options, source, sourcePos, first, last, maxDist,
                               stamp, stampId, *out);
                    // Counting sort of the hits by receiver block (stable).
                    out->blockStart.assign(kMergeBlocks + 1, 0);
                    for (const HitRecord& h : out->hits) ++out->blockStart[blockOf(h.receiver) + 1];
                    for (int b = 0; b < kMergeBlocks; ++b) out->blockStart[b + 1] += out->blockStart[b];
                    std::vector<HitRecord> grouped(out->hits.size());
                    std::vector<uint32_t> fill(out->blockStart.begin(), out->blockStart.end() - 1);
                    for (const HitRecord& h : out->hits) grouped[fill[blockOf(h.receiver)]++] = h;
                    out->hits.swap(grouped);
                    return out.release();
                }) &
            tbb::make_filter<ChunkOut*, void>(tbb::filter_mode::serial_in_order, [&](ChunkOut* raw) {
                std::unique_ptr<ChunkOut> out(raw);
                for (int b = 0; b < kBandCount; ++b) {
                    emitted[b] += out->emitted[b];
                    absorbed[b] += out->absorbed[b];
                    air[b] += out->air[b];
                    escaped[b] += out->escaped[b];
                    remaining[b] += out->remaining[b];
                }
                result.subRays += out->subRays;
                if (options.raysDone) options.raysDone->fetch_add(kRaysPerChunk, std::memory_order_relaxed);
                result.segments += out->segments;
                result.reflections += out->reflections;
                result.escapedRays += out->escapedRays;
                result.fallbackCasts += out->fallbackCasts;
                result.cornerHits += out->cornerHits;
                result.receiverHits += static_cast<int64_t>(out->hits.size());
                for (const EscapedRay& e : out->escapedSamples)
                    if (result.escapedSamples.size() < kMaxEscapedRecords) result.escapedSamples.push_back(e);
                pending.push_back(std::move(out));
                if (pending.size() >= kMergeGroup) flush();
            }));
    flush();
    for (int b = 0; b < kBandCount; ++b) {
        result.emitted[b] = emitted[b];
        result.absorbed[b] = absorbed[b];
        result.air[b] = air[b];
        result.escaped[b] = escaped[b];
        result.remaining[b] = remaining[b];
    }
    result.rays = options.rays;

    // Escaped rays: an error over 1 %, naming the nearest open edge; a warning below.
    if (result.escapedRays > 0) {
        double share = static_cast<double>(result.escapedRays) / static_cast<double>(result.subRays);
        std::ostringstream msg;
        msg.precision(3);
        msg << result.escapedRays << " of " << result.subRays << " rays (" << 100 * share
            << " %) left the model";
        SourceLoc at = FileLoc(scene.meshPath);
        const auto& edges = room.geometry.OpenEdges();
        if (!edges.empty() && !result.escapedSamples.empty()) {
            double best = std::numeric_limits<double>::infinity();
            const OpenEdge* nearest = nullptr;
            for (const EscapedRay& e : result.escapedSamples)
                for (const OpenEdge& oe : edges) {
                    Vec3 ab = oe.b - oe.a;
                    double t = ab.squaredNorm() > 0 ? std::clamp((e.origin - oe.a).dot(ab) / ab.squaredNorm(), 0.0, 1.0) : 0;
                    double d = (oe.a + ab * t - e.origin).norm();
                    if (d < best) {
                        best = d;
                        nearest = &oe;
                    }
                }
            Vec3 a = scene.ToModel(nearest->a), b = scene.ToModel(nearest->b);
            at.line = nearest->objLine;
            msg << "; the model is open, nearest open edge to where they left: (" << a.x() << ", "
                << a.y() << ", " << a.z() << ") - (" << b.x() << ", " << b.y() << ", " << b.z()
                << ") in model units; close the mesh there (every edge must be shared by two faces)";
        } else {
            msg << "; no open edge was found, so this is a numerical leak (please report it)";
            if (!result.escapedSamples.empty()) {
                Vec3 p = scene.ToModel(result.escapedSamples.front().origin);
                msg << "; first at (" << p.x() << ", " << p.y() << ", " << p.z() << ")";
            }
        }
        if (share > 0.01)
            diag.Error(at, msg.str());
        else
            diag.Warning(at, msg.str());
    }
    return result;
}

}  // namespace hallwright
