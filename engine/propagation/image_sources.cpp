// Image sources (Allen & Berkley 1979; Borish 1984) with the ray-guided candidate search of
// Vorländer 1989. See image_sources.h for the method and the energy convention.
#include "hallwright/image_sources.h"

#include <algorithm>
#include <array>
#include <cmath>
#include <map>
#include <numeric>
#include <string>
#include <utility>

#include <tbb/blocked_range.h>
#include <tbb/parallel_for.h>

#include "hallwright/air.h"

namespace hallwright {

namespace {

/* A point this close to a plane (m) counts as lying on it: it cannot be reflected. */
constexpr double kSideEps = 1e-9;
/* A face "follows" another only if some vertex lies this far (m) on its reflecting side. */
constexpr double kPairEps = 1e-6;
/* Barycentric slack of the point-in-face test (shared edges of a face's triangles). */
constexpr double kBaryEps = 1e-9;
/* Rays per chunk of the candidate search (fixed, so chunking never depends on threads). */
constexpr int64_t kRaysPerChunk = 4096;

using Sequence = std::array<uint32_t, kMaxImageOrder>;  // face + 1 per reflection, 0 = unused

/* Per-face data for the exact tests, flat. */
struct FaceTable {
    int count = 0;
    std::vector<Vec3> normal;
    std::vector<double> offset;
    std::vector<char> twoSided;
    std::vector<int> axisU, axisV;           // projection axes (the normal's largest axis dropped)
    std::vector<double> boxMin, boxMax;      // 2 per face: projected bounds, slack included
    std::vector<int> triBegin;               // count + 1 offsets into tri
    std::vector<double> tri;                 // 6 per triangle: x0, y0, m00, m01, m10, m11
    std::vector<Bands> specular;             // (1 - alpha)(1 - s)
    std::vector<double> maxSd, minSd;        // [f * count + g]: extremes of sd_f over g's vertices
    std::vector<std::vector<int>> adjacent;  // faces sharing a vertex with each face, ascending

    /* True if p (on the face's plane) lies inside face f. */
    bool Contains(int f, const Vec3& p) const {
        const double u = p[axisU[f]], v = p[axisV[f]];
        if (u < boxMin[2 * f] || u > boxMax[2 * f] || v < boxMin[2 * f + 1] || v > boxMax[2 * f + 1]) return false;
        for (int t = triBegin[f]; t < triBegin[f + 1]; ++t) {
            const double* d = &tri[6 * static_cast<size_t>(t)];
            const double du = u - d[0], dv = v - d[1];
            const double b1 = d[2] * du + d[3] * dv;
            const double b2 = d[4] * du + d[5] * dv;
            if (b1 >= -kBaryEps && b2 >= -kBaryEps && b1 + b2 <= 1.0 + kBaryEps) return true;
        }
        return false;
    }
    double Sd(int f, const Vec3& p) const { return normal[f].dot(p) - offset[f]; }
};

/* Faces of open panels: triangles of a mesh component that has open (or non-manifold) edges
   and is not the room's outer shell. Geometry::Build keeps their winding as given, so they
   reflect on both sides. The outer shell is the closed component of largest |volume|, or the
   largest component when none is closed (the same rule Geometry::Build orients with). */
std::vector<char> TwoSidedTriangles(const Mesh& mesh, const std::vector<uint32_t>& weld) {
    const size_t nTri = mesh.TriangleCount();
    std::map<std::pair<uint32_t, uint32_t>, std::vector<uint32_t>> edges;
    for (uint32_t t = 0; t < nTri; ++t)
        for (int k = 0; k < 3; ++k) {
            const uint32_t a = weld[mesh.triangles[t][k]], b = weld[mesh.triangles[t][(k + 1) % 3]];
            if (a != b) edges[{std::min(a, b), std::max(a, b)}].push_back(t);
        }
    std::vector<uint32_t> parent(nTri);
    std::iota(parent.begin(), parent.end(), 0u);
    auto find = [&](uint32_t x) {
        while (parent[x] != x) x = parent[x] = parent[parent[x]];
        return x;
    };
    for (const auto& [key, uses] : edges)
        if (uses.size() == 2) {
            const uint32_t a = find(uses[0]), b = find(uses[1]);
            if (a != b) parent[std::max(a, b)] = std::min(a, b);
        }
    std::vector<char> open(nTri, 0);
    for (const auto& [key, uses] : edges)
        if (uses.size() != 2)
            for (uint32_t t : uses) open[find(t)] = 1;
    std::vector<double> volume(nTri, 0.0);
    for (uint32_t t = 0; t < nTri; ++t)
        volume[find(t)] += mesh.Vertex(t, 0).dot(mesh.Vertex(t, 1).cross(mesh.Vertex(t, 2))) / 6.0;
    int64_t outer = -1;
    for (int pass = 0; pass < 2 && outer < 0; ++pass)
        for (uint32_t t = 0; t < nTri; ++t) {
            if (find(t) != t || (pass == 0 && open[t])) continue;
            if (outer < 0 || std::abs(volume[t]) > std::abs(volume[outer])) outer = t;
        }
    std::vector<char> twoSided(nTri, 0);
    for (uint32_t t = 0; t < nTri; ++t) {
        const uint32_t root = find(t);
        twoSided[t] = open[root] && static_cast<int64_t>(root) != outer;
    }
    return twoSided;
}

FaceTable BuildFaceTable(const Scene& scene, const Geometry& geometry) {
    const Mesh& mesh = geometry.GetMesh();
    const std::vector<Face>& faces = geometry.Faces();
    const std::vector<uint32_t> weld = WeldedVertexIds(mesh);
    const std::vector<char> twoSidedTri = TwoSidedTriangles(mesh, weld);
    FaceTable ft;
    ft.count = static_cast<int>(faces.size());
    const int n = ft.count;
    ft.normal.resize(n);
    ft.offset.resize(n);
    ft.twoSided.assign(n, 0);
    ft.axisU.resize(n);
    ft.axisV.resize(n);
    ft.boxMin.resize(2 * n);
    ft.boxMax.resize(2 * n);
    ft.triBegin.assign(n + 1, 0);
    ft.specular.resize(n);
    std::vector<std::vector<Vec3>> vertices(n);
    for (int f = 0; f < n; ++f) {
        const Face& face = faces[f];
        ft.normal[f] = face.normal;
        ft.offset[f] = face.offset;
        int drop = 0;
        face.normal.cwiseAbs().maxCoeff(&drop);
        const int u = (drop + 1) % 3, v = (drop + 2) % 3;
        ft.axisU[f] = u;
        ft.axisV[f] = v;
        double lo[2] = {1e300, 1e300}, hi[2] = {-1e300, -1e300};
        for (uint32_t t : face.triangles) {
            if (twoSidedTri[t]) ft.twoSided[f] = 1;
            Vec3 p[3];
            for (int c = 0; c < 3; ++c) {
                p[c] = mesh.Vertex(t, c);
                vertices[f].push_back(p[c]);
                lo[0] = std::min(lo[0], p[c][u]);
                lo[1] = std::min(lo[1], p[c][v]);
                hi[0] = std::max(hi[0], p[c][u]);
                hi[1] = std::max(hi[1], p[c][v]);
            }
            // Inverse of [p1 - p0, p2 - p0] in the projected plane gives the barycentrics.
            const double a = p[1][u] - p[0][u], b = p[2][u] - p[0][u];
            const double c = p[1][v] - p[0][v], d = p[2][v] - p[0][v];
            const double det = a * d - b * c;
            if (det == 0) continue;  // degenerate in projection: contributes no area
            const double inv = 1.0 / det;
            ft.tri.insert(ft.tri.end(), {p[0][u], p[0][v], d * inv, -b * inv, -c * inv, a * inv});
        }
        ft.triBegin[f + 1] = static_cast<int>(ft.tri.size() / 6);
        const double slack = 1e-9 * std::max({1.0, hi[0] - lo[0], hi[1] - lo[1]});
        ft.boxMin[2 * f] = lo[0] - slack;
        ft.boxMin[2 * f + 1] = lo[1] - slack;
        ft.boxMax[2 * f] = hi[0] + slack;
        ft.boxMax[2 * f + 1] = hi[1] + slack;
        const Material& m = scene.materials.at(face.material);
        ft.specular[f] = (1.0 - m.absorption) * (1.0 - m.scattering);
    }
    // Faces that touch (share a welded vertex).
    {
        std::vector<std::pair<uint32_t, int>> vertexFace;
        for (int f = 0; f < n; ++f)
            for (uint32_t t : faces[f].triangles)
                for (int c = 0; c < 3; ++c) vertexFace.push_back({weld[mesh.triangles[t][c]], f});
        std::sort(vertexFace.begin(), vertexFace.end());
        vertexFace.erase(std::unique(vertexFace.begin(), vertexFace.end()), vertexFace.end());
        ft.adjacent.assign(n, {});
        for (size_t i = 0; i < vertexFace.size();) {
            size_t j = i;
            while (j < vertexFace.size() && vertexFace[j].first == vertexFace[i].first) ++j;
            for (size_t a = i; a < j; ++a)
                for (size_t b = i; b < j; ++b)
                    if (a != b) ft.adjacent[vertexFace[a].second].push_back(vertexFace[b].second);
            i = j;
        }
        for (auto& adj : ft.adjacent) {
            std::sort(adj.begin(), adj.end());
            adj.erase(std::unique(adj.begin(), adj.end()), adj.end());
        }
    }
    ft.maxSd.assign(static_cast<size_t>(n) * n, -1e300);
    ft.minSd.assign(static_cast<size_t>(n) * n, 1e300);
    for (int f = 0; f < n; ++f)
        for (int g = 0; g < n; ++g) {
            double& mx = ft.maxSd[static_cast<size_t>(f) * n + g];
            double& mn = ft.minSd[static_cast<size_t>(f) * n + g];
            for (const Vec3& p : vertices[g]) {
                const double sd = ft.Sd(f, p);
                mx = std::max(mx, sd);
                mn = std::min(mn, sd);
            }
        }
    return ft;
}

/* The image tree of one source, flat, parents before children (depth-first order). Node 0 is
   the source itself. */
struct ImageTree {
    std::vector<Vec3> image;
    std::vector<int32_t> face, parent;
    std::vector<int8_t> side, depth;  // side: +1 / -1 = the face's reflecting side (sign of sd)
    std::vector<double> imageDepth;   // distance of the image behind its plane (> 0)

    size_t Size() const { return image.size(); }
    void Add(const Vec3& p, int32_t f, int32_t par, int8_t s, int8_t d, double depthBehind) {
        image.push_back(p);
        face.push_back(f);
        parent.push_back(par);
        side.push_back(s);
        depth.push_back(d);
        imageDepth.push_back(depthBehind);
    }
};

/* Mirrors node `par`'s image in face g if that reflection can be part of a valid path
   (Borish 1984): the image lies strictly on a reflecting side of g, and g has some part on
   the reflecting side of the previous face. Returns the new node, or -1. */
int32_t TryAddChild(const FaceTable& ft, ImageTree& tree, int32_t par, int g) {
    const int pf = tree.face[par];
    if (pf == g) return -1;
    if (pf >= 0) {
        const size_t k = static_cast<size_t>(pf) * ft.count + g;
        if (tree.side[par] > 0 ? ft.maxSd[k] <= kPairEps : ft.minSd[k] >= -kPairEps) return -1;
    }
    const Vec3 prev = tree.image[par];
    const double sd = ft.Sd(g, prev);
    int8_t s = 1;
    if (sd <= kSideEps) {
        if (!ft.twoSided[g] || sd >= -kSideEps) return -1;
        s = -1;
    }
    const Vec3 img = prev - 2.0 * sd * ft.normal[g];
    tree.Add(img, g, par, s, static_cast<int8_t>(tree.depth[par] + 1), std::abs(sd));
    return static_cast<int32_t>(tree.Size() - 1);
}

/* Full enumeration, depth first. Returns false when the tree would exceed maxImages. */
bool ExpandExhaustive(const FaceTable& ft, ImageTree& tree, int32_t node, int order, int64_t maxImages) {
    if (tree.depth[node] >= order) return true;
    for (int g = 0; g < ft.count; ++g) {
        const int32_t child = TryAddChild(ft, tree, node, g);
        if (child < 0) continue;
        if (static_cast<int64_t>(tree.Size()) > maxImages) return false;
        if (!ExpandExhaustive(ft, tree, child, order, maxImages)) return false;
    }
    return true;
}

/* Fibonacci-sphere direction i of n (deterministic, near-uniform). */
Vec3 FibonacciDirection(int64_t i, int64_t n) {
    const double golden = M_PI * (3.0 - std::sqrt(5.0));
    const double y = 1.0 - (2.0 * static_cast<double>(i) + 1.0) / static_cast<double>(n);
    const double r = std::sqrt(std::max(0.0, 1.0 - y * y));
    const double phi = golden * static_cast<double>(i);
    return Vec3(r * std::cos(phi), y, r * std::sin(phi));
}

/* Candidate face sequences visited by specular rays from the source (Vorländer 1989):
   sorted, unique, every prefix included. */
std::vector<Sequence> SearchSequences(const FaceTable& ft, const Geometry& geometry, const Vec3& source, int order,
                                      int64_t rays, double offset) {
    const RayScene& rs = geometry.Rays();
    const std::vector<int>& triFace = geometry.TriangleFace();
    const int64_t chunks = (rays + kRaysPerChunk - 1) / kRaysPerChunk;
    std::vector<std::vector<Sequence>> found(chunks);
    tbb::parallel_for(int64_t(0), chunks, [&](int64_t c) {
        std::vector<Sequence>& out = found[c];
        const int64_t end = std::min(rays, (c + 1) * kRaysPerChunk);
        for (int64_t r = c * kRaysPerChunk; r < end; ++r) {
            Vec3 o = source, d = FibonacciDirection(r, rays);
            Sequence seq{};
            int prev = -1;
            for (int k = 0; k < order; ++k) {
                const auto hit = rs.Intersect(o, d);
                if (!hit) break;
                const int f = triFace[hit->triangle];
                if (f < 0 || f == prev) break;
                const double dn = d.dot(ft.normal[f]);
                if (dn >= 0 && !ft.twoSided[f]) break;  // reached a face from behind: outside the room
                seq[k] = static_cast<uint32_t>(f) + 1;
                out.push_back(seq);
                // Specular reflection about the side the ray came from; restart just off it.
                const Vec3 n = dn < 0 ? ft.normal[f] : Vec3(-ft.normal[f]);
                const Vec3 p = o + hit->t * d;
                d = (d - 2.0 * d.dot(n) * n).normalized();
                o = p + offset * n;
                prev = f;
            }
        }
        std::sort(out.begin(), out.end());
        out.erase(std::unique(out.begin(), out.end()), out.end());
    });
    std::vector<Sequence> all;
    for (auto& v : found) all.insert(all.end(), v.begin(), v.end());
    std::sort(all.begin(), all.end());
    all.erase(std::unique(all.begin(), all.end()), all.end());
    return all;
}

/* Image tree of the candidate sequences (sorted, so a prefix precedes its extensions). */
void BuildTreeFromSequences(const FaceTable& ft, ImageTree& tree, const std::vector<Sequence>& sequences) {
    std::array<int32_t, kMaxImageOrder + 1> nodeAt{};
    std::array<uint32_t, kMaxImageOrder> faceAt{};
    int stackDepth = 0;  // nodeAt[0..stackDepth] is the current path; nodeAt[0] = root
    nodeAt[0] = 0;
    for (const Sequence& s : sequences) {
        int len = 0;
        while (len < kMaxImageOrder && s[len] != 0) ++len;
        int common = 0;
        while (common < stackDepth && common < len && faceAt[common] == s[common]) ++common;
        stackDepth = common;
        for (int k = common; k < len; ++k) {
            const int32_t par = nodeAt[k];
            const int32_t child = par < 0 ? -1 : TryAddChild(ft, tree, par, static_cast<int>(s[k]) - 1);
            faceAt[k] = s[k];
            nodeAt[k + 1] = child;  // -1: invalid, its extensions are skipped
            stackDepth = k + 1;
        }
    }
}

/* Completes the ray-found tree where rays are known to thin out: every first-order image,
   and below every node (up to the order) the reflections off the faces that touch its face.
   Beams narrower than the ray spacing are mostly those cut by an edge: a floor strip in
   front of a reveal, a side aisle beside a wall, a corner. New nodes are completed too. */
void CompleteAdjacent(const FaceTable& ft, ImageTree& tree, int order) {
    std::vector<std::vector<int32_t>> children(tree.Size());
    for (size_t m = 1; m < tree.Size(); ++m) children[tree.parent[m]].push_back(tree.face[m]);
    std::vector<char> present(ft.count, 0);
    std::vector<int> all(ft.count);
    std::iota(all.begin(), all.end(), 0);
    for (size_t m = 0; m < tree.Size(); ++m) {
        if (tree.depth[m] >= order) continue;
        const std::vector<int>& candidates = m == 0 ? all : ft.adjacent[tree.face[m]];
        if (m < children.size())
            for (int32_t f : children[m]) present[f] = 1;
        for (int g : candidates)
            if (!present[g]) TryAddChild(ft, tree, static_cast<int32_t>(m), g);
        if (m < children.size())
            for (int32_t f : children[m]) present[f] = 0;
    }
}

struct ReceiverCounts {
    int64_t checks = 0, queries = 0;
};

/* All valid paths from the tree's source to receiver position r. */
ReceiverPaths ValidatePaths(const FaceTable& ft, const ImageTree& tree, const RayScene& rs, const Vec3& r,
                            double offset, double c, const Bands& airM, ReceiverCounts& counts) {
    ReceiverPaths out;
    const Vec3 s = tree.image[0];

    // Direct sound.
    {
        const double len = (s - r).norm();
        ++counts.queries;
        if (rs.Occluded(r, s)) {
            out.directOccluded = true;
        } else {
            SpecularPath p;
            p.order = 0;
            p.lengthM = len;
            p.delayS = len / c;
            p.energy = (-airM * len).exp() / (4.0 * M_PI * len * len);
            p.arrivalFrom = (s - r) / len;
            out.paths.push_back(std::move(p));
        }
    }

    std::array<Vec3, kMaxImageOrder> points, lifted;
    std::array<int, kMaxImageOrder> faces;
    for (size_t n = 1; n < tree.Size(); ++n) {
        ++counts.checks;
        const int k = tree.depth[n];
        // Walk back from the receiver: reflection point on each face, inside it, on its side.
        Vec3 q = r;
        bool ok = true;
        int32_t m = static_cast<int32_t>(n);
        for (int i = k - 1; i >= 0; --i, m = tree.parent[m]) {
            const int f = tree.face[m];
            const double sq = tree.side[m] * ft.Sd(f, q);
            if (sq <= kSideEps) {
                ok = false;
                break;
            }
            const double t = sq / (sq + tree.imageDepth[m]);
            const Vec3 p = q + t * (tree.image[m] - q);
            if (!ft.Contains(f, p)) {
                ok = false;
                break;
            }
            points[i] = p;
            faces[i] = f;
            lifted[i] = p + (offset * tree.side[m]) * ft.normal[f];
            q = p;
        }
        if (!ok) continue;
        // Every leg free: receiver -> P_k -> ... -> P_1 -> source.
        ++counts.queries;
        if (rs.Occluded(r, lifted[k - 1])) continue;
        for (int i = k - 1; i >= 0 && ok; --i) {
            ++counts.queries;
            ok = !rs.Occluded(lifted[i], i > 0 ? lifted[i - 1] : s);
        }
        if (!ok) continue;

        Bands gain = Bands::Ones();
        for (int i = 0; i < k; ++i) gain *= ft.specular[faces[i]];
        if (!(gain.maxCoeff() > 0)) continue;  // nothing is reflected specularly
        const double len = (tree.image[n] - r).norm();
        SpecularPath p;
        p.order = k;
        p.lengthM = len;
        p.delayS = len / c;
        p.energy = gain * (-airM * len).exp() / (4.0 * M_PI * len * len);
        p.arrivalFrom = (points[k - 1] - r).normalized();
        p.faces.assign(faces.begin(), faces.begin() + k);
        out.paths.push_back(std::move(p));
    }
    // By delay; equal delays (symmetric rooms) by order and face sequence, so the order does not
    // depend on how the tree was built.
    std::sort(out.paths.begin(), out.paths.end(), [](const SpecularPath& a, const SpecularPath& b) {
        if (a.delayS != b.delayS) return a.delayS < b.delayS;
        if (a.order != b.order) return a.order < b.order;
        return a.faces < b.faces;
    });
    return out;
}

}  // namespace

ImageSourceOptions ImageSourceOptionsFrom(const SimulationSettings& settings) {
    ImageSourceOptions o;
    o.order = settings.imageOrder;
    return o;
}

std::vector<ReceiverPaths> ComputeImageSources(const Scene& scene, const Geometry& geometry, int source,
                                               const std::vector<int>& receivers,
                                               const ImageSourceOptions& options, Diagnostics& diag,
                                               ImageSourceStats* stats) {
    const SourceLoc sceneLoc{scene.scenePath, 0, 0, ""};
    if (source < 0 || source >= static_cast<int>(scene.sources.size())) {
        diag.Error(sceneLoc, "image sources: source index " + std::to_string(source) + " does not exist (the scene has " +
                                 std::to_string(scene.sources.size()) + " source(s))");
        return {};
    }
    if (options.order < 0 || options.order > kMaxImageOrder) {
        diag.Error(sceneLoc, "image_order = " + std::to_string(options.order) + " is out of range; use 0 to " +
                                 std::to_string(kMaxImageOrder) + " (3 is usual: later reflections come from the ray tracer)");
        return {};
    }
    if (!options.exhaustive && options.order > 0 && options.searchRays <= 0) {
        diag.Error(sceneLoc, "image sources: the accelerated search needs at least one search ray");
        return {};
    }
    std::vector<int> which = receivers;
    if (which.empty()) {
        which.resize(scene.receivers.size());
        std::iota(which.begin(), which.end(), 0);
    }
    const Vec3 s = scene.sources[source].position;
    for (int i : which) {
        if (i < 0 || i >= static_cast<int>(scene.receivers.size())) {
            diag.Error(sceneLoc, "image sources: receiver index " + std::to_string(i) + " does not exist");
            return {};
        }
        if ((scene.receivers[i].position - s).norm() < 1e-6) {
            diag.Error(scene.receivers[i].definedAt, "receiver \"" + scene.receivers[i].name +
                                                         "\" is at the position of source \"" +
                                                         scene.sources[source].name + "\"; move one of them");
            return {};
        }
    }

    const FaceTable ft = BuildFaceTable(scene, geometry);
    const double extent = (geometry.BoundsMax() - geometry.BoundsMin()).maxCoeff();
    // Leg ends are lifted this far off their faces, well above float rounding of the Embree
    // mesh and the coplanar-merge tolerance (0.1 mm) of Geometry::Build.
    const double offset = std::max(5e-4, 1e-5 * extent);

    ImageTree tree;
    tree.Add(s, -1, -1, 0, 0, 0.0);
    ImageSourceStats st;
    if (options.order > 0) {
        // A small image tree is cheaper to enumerate than to search for, and exact.
        bool full = options.exhaustive;
        if (!full && options.fullEnumerationLimit > 0) {
            full = ExpandExhaustive(ft, tree, 0, options.order, options.fullEnumerationLimit);
            if (!full) {
                tree = ImageTree();
                tree.Add(s, -1, -1, 0, 0, 0.0);
            }
        }
        st.enumeratedFully = full;
        if (options.exhaustive) {
            if (!ExpandExhaustive(ft, tree, 0, options.order, options.maxImages)) {
                diag.Error(sceneLoc, "exhaustive image sources: more than " + std::to_string(options.maxImages) +
                                         " images at order " + std::to_string(options.order) + " over " +
                                         std::to_string(ft.count) +
                                         " faces; use the accelerated search or a lower image_order");
                return {};
            }
        } else if (!full) {
            BuildTreeFromSequences(ft, tree,
                                   SearchSequences(ft, geometry, s, options.order, options.searchRays, offset));
            if (options.completeAdjacent) CompleteAdjacent(ft, tree, options.order);
            st.searchRays = options.searchRays;
        }
    }
    st.images = static_cast<int64_t>(tree.Size()) - 1;

    const double c = SpeedOfSound(scene.air.temperatureC);
    const Bands airM = options.airAbsorption ? AirEnergyAttenuationPerM(scene.air) : Bands::Zero();
    std::vector<ReceiverPaths> out(which.size());
    std::vector<ReceiverCounts> counts(which.size());
    tbb::parallel_for(tbb::blocked_range<size_t>(0, which.size(), 1), [&](const tbb::blocked_range<size_t>& range) {
        for (size_t i = range.begin(); i < range.end(); ++i) {
            out[i] = ValidatePaths(ft, tree, geometry.Rays(), scene.receivers[which[i]].position, offset, c, airM,
                                   counts[i]);
            out[i].source = source;
            out[i].receiver = which[i];
        }
    });
    for (size_t i = 0; i < which.size(); ++i) {
        st.pathChecks += counts[i].checks;
        st.occlusionQueries += counts[i].queries;
        st.paths += static_cast<int64_t>(out[i].paths.size());
    }
    if (stats) *stats = st;
    return out;
}

std::vector<ReceiverPaths> ComputeImageSources(const Room& room, int source, const ImageSourceOptions& options,
                                               Diagnostics& diag, ImageSourceStats* stats) {
    return ComputeImageSources(room.scene, room.geometry, source, {}, options, diag, stats);
}

std::vector<std::vector<ReceiverPaths>> ComputeImageSourcesAllSources(const Room& room,
                                                                      const ImageSourceOptions& options,
                                                                      Diagnostics& diag, ImageSourceStats* stats) {
    std::vector<std::vector<ReceiverPaths>> out;
    ImageSourceStats total;
    total.enumeratedFully = true;
    for (int s = 0; s < static_cast<int>(room.scene.sources.size()); ++s) {
        ImageSourceStats st;
        out.push_back(ComputeImageSources(room, s, options, diag, &st));
        if (diag.HasErrors()) return {};
        total.enumeratedFully = total.enumeratedFully && st.enumeratedFully;
        total.searchRays += st.searchRays;
        total.images += st.images;
        total.pathChecks += st.pathChecks;
        total.occlusionQueries += st.occlusionQueries;
        total.paths += st.paths;
    }
    if (stats) *stats = total;
    return out;
}

}  // namespace hallwright
