// Geometry::Build: validation, vertex welding, winding repair, planar-face merging, volume
// and areas of the room, and point queries used when seats are placed.
#include "hallwright/geometry.h"

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdio>
#include <map>
#include <numeric>
#include <unordered_map>

#include "util/union_find.h"

namespace hallwright {

namespace {

/* Degenerate triangles (area below this, m^2) are dropped: they can never be hit. */
constexpr double kMinTriangleAreaM2 = 1e-8;
/* Welding tolerance for topology (m): vertices closer than this are one vertex. */
constexpr double kWeldM = 1e-5;
/* Coplanar merge: normals within 0.05 degrees and vertices within 0.1 mm of the plane. */
const double kCoplanarCos = std::cos(0.05 * M_PI / 180.0);
constexpr double kCoplanarDistM = 1e-4;
/* Size checks for a likely units mistake (common practice, no source). */
constexpr double kLargestPlausibleM = 1000.0;
constexpr double kSmallestPlausibleM = 2.0;

std::string FormatPoint(const Scene& scene, const Vec3& p) {
    const Vec3 m = scene.ToModel(p);
    char buf[96];
    std::snprintf(buf, sizeof buf, "(%.3f, %.3f, %.3f)", m.x(), m.y(), m.z());
    return buf;
}

SourceLoc MeshLoc(const Scene& scene, int line) { return SourceLoc{scene.meshPath, line, 0, ""}; }

/* Welded vertex ids: positions equal within kWeldM share an id (deterministic). */
std::vector<uint32_t> WeldVertices(const Mesh& mesh) {
    std::map<std::array<int64_t, 3>, uint32_t> cells;
    std::vector<uint32_t> id(mesh.vertices.size());
    for (size_t i = 0; i < mesh.vertices.size(); ++i) {
        std::array<int64_t, 3> key;
        for (int k = 0; k < 3; ++k) key[k] = std::llround(mesh.vertices[i][k] / kWeldM);
        auto [it, inserted] = cells.emplace(key, static_cast<uint32_t>(i));
        id[i] = it->second;
    }
    return id;
}

struct EdgeUse {
    uint32_t triangle;
    bool forward;  // traversed from the smaller to the larger welded id
};

}  // namespace

std::vector<uint32_t> WeldedVertexIds(const Mesh& mesh) { return WeldVertices(mesh); }

std::optional<Geometry> Geometry::Build(Scene& scene, Diagnostics& diag) {
    Mesh& mesh = scene.mesh;
    Geometry g;

    // Drop degenerate triangles (warn once with a count and the first lines).
    {
        std::vector<size_t> keep;
        std::string lines;
        int dropped = 0;
        for (size_t t = 0; t < mesh.TriangleCount(); ++t) {
            const auto& tri = mesh.triangles[t];
            bool bad = tri[0] == tri[1] || tri[1] == tri[2] || tri[0] == tri[2] ||
                       !(mesh.TriangleArea(t) >= kMinTriangleAreaM2);
            if (bad) {
                if (dropped < 5) lines += (lines.empty() ? "" : ", ") + std::to_string(mesh.triangleLine[t]);
                ++dropped;
            } else {
                keep.push_back(t);
            }
        }
        if (dropped > 0) {
            diag.Warning(MeshLoc(scene, mesh.triangleLine.empty() ? 0 : 0),
                         std::to_string(dropped) + " degenerate (zero-area) triangle(s) dropped, from face line(s) " +
                             lines + (dropped > 5 ? ", ..." : "") +
                             "; they can never be hit — remove them in the modeller to silence this");
            Mesh kept = mesh;
            kept.triangles.clear();
            kept.triangleMaterial.clear();
            kept.triangleGroup.clear();
            kept.triangleLine.clear();
            for (size_t t : keep) {
                kept.triangles.push_back(mesh.triangles[t]);
                kept.triangleMaterial.push_back(mesh.triangleMaterial[t]);
                kept.triangleGroup.push_back(mesh.triangleGroup[t]);
                kept.triangleLine.push_back(mesh.triangleLine[t]);
            }
            mesh = std::move(kept);
        }
    }
    const size_t nTri = mesh.TriangleCount();
    if (nTri == 0) {
        diag.Error(MeshLoc(scene, 0), "the model has no usable triangles — export the room's surfaces as faces");
        return std::nullopt;
    }

    // Topology on welded vertices: which triangles use each edge, and in which direction.
    const std::vector<uint32_t> weld = WeldVertices(mesh);
    std::map<std::pair<uint32_t, uint32_t>, std::vector<EdgeUse>> edges;
    for (uint32_t t = 0; t < nTri; ++t) {
        for (int k = 0; k < 3; ++k) {
            uint32_t a = weld[mesh.triangles[t][k]], b = weld[mesh.triangles[t][(k + 1) % 3]];
            if (a == b) continue;
            edges[{std::min(a, b), std::max(a, b)}].push_back({t, a < b});
        }
    }

    // Orientation propagation across manifold edges: neighbours must traverse a shared edge in
    // opposite directions. Breadth-first per connected component.
    std::vector<std::vector<std::pair<uint32_t, bool>>> adjacency(nTri);  // (neighbour, same direction)
    for (const auto& [key, uses] : edges) {
        if (uses.size() != 2) continue;
        const bool same = uses[0].forward == uses[1].forward;
        adjacency[uses[0].triangle].push_back({uses[1].triangle, same});
        adjacency[uses[1].triangle].push_back({uses[0].triangle, same});
    }
    std::vector<int> component(nTri, -1);
    std::vector<char> flip(nTri, 0);
    int componentCount = 0;
    for (uint32_t seed = 0; seed < nTri; ++seed) {
        if (component[seed] >= 0) continue;
        std::vector<uint32_t> queue = {seed};
        component[seed] = componentCount;
        for (size_t q = 0; q < queue.size(); ++q) {
            const uint32_t t = queue[q];
            for (auto [n, same] : adjacency[t]) {
                if (component[n] >= 0) continue;
                component[n] = componentCount;
                flip[n] = same ? !flip[t] : flip[t];
                queue.push_back(n);
            }
        }
        ++componentCount;
    }
    // Per component keep the majority winding, so the minority is what gets reported as fixed.
    std::vector<int> flippedCount(componentCount, 0), sizeOf(componentCount, 0);
    for (uint32_t t = 0; t < nTri; ++t) {
        flippedCount[component[t]] += flip[t];
        sizeOf[component[t]]++;
    }
    for (uint32_t t = 0; t < nTri; ++t)
        if (2 * flippedCount[component[t]] > sizeOf[component[t]]) flip[t] = !flip[t];
    int fixedCount = 0;
    int firstFixedLine = 0;
    for (uint32_t t = 0; t < nTri; ++t) {
        if (!flip[t]) continue;
        if (fixedCount++ == 0) firstFixedLine = mesh.triangleLine[t];
        std::swap(mesh.triangles[t][1], mesh.triangles[t][2]);
    }
    if (fixedCount > 0)
        diag.Warning(MeshLoc(scene, firstFixedLine),
                     std::to_string(fixedCount) +
                         " triangle(s) were wound against their neighbours (first at this line); their normals were "
                         "flipped to match — fix the winding in the modeller to silence this");

    // Open edges (used once) and non-manifold edges (used more than twice).
    int nonManifold = 0;
    std::vector<char> componentClosed(componentCount, 1);
    for (const auto& [key, uses] : edges) {
        if (uses.size() == 1) {
            const uint32_t t = uses[0].triangle;
            OpenEdge e;
            e.a = mesh.vertices[key.first];
            e.b = mesh.vertices[key.second];
            e.objLine = mesh.triangleLine[t];
            g.openEdges_.push_back(e);
            componentClosed[component[t]] = 0;
        } else if (uses.size() > 2) {
            ++nonManifold;
            for (const auto& u : uses) componentClosed[component[u.triangle]] = 0;
        }
    }

    // Signed volume per component. Internal convention: normals point INTO the room, so the
    // outer shell has negative signed volume and closed obstacles inside it positive.
    std::vector<double> signedVolume(componentCount, 0.0);
    for (uint32_t t = 0; t < nTri; ++t) {
        const Vec3 p0 = mesh.Vertex(t, 0), p1 = mesh.Vertex(t, 1), p2 = mesh.Vertex(t, 2);
        signedVolume[component[t]] += p0.dot(p1.cross(p2)) / 6.0;
    }
    int outer = -1;
    for (int c = 0; c < componentCount; ++c)
        if (componentClosed[c] && (outer < 0 || std::abs(signedVolume[c]) > std::abs(signedVolume[outer]))) outer = c;
    if (outer < 0) {
        // No closed shell: orient by the largest component's volume estimate anyway.
        for (int c = 0; c < componentCount; ++c)
            if (outer < 0 || std::abs(signedVolume[c]) > std::abs(signedVolume[outer])) outer = c;
    }
    for (int c = 0; c < componentCount; ++c) {
        const bool wantNegative = (c == outer);
        const bool isNegative = signedVolume[c] < 0;
        if (!componentClosed[c] && c != outer) continue;  // open panels: two-sided, keep winding
        if (wantNegative == isNegative) continue;
        for (uint32_t t = 0; t < nTri; ++t)
            if (component[t] == c) std::swap(mesh.triangles[t][1], mesh.triangles[t][2]);
        signedVolume[c] = -signedVolume[c];
        if (c == outer)
            diag.Warning(MeshLoc(scene, 0),
                         "the model's faces point away from the room (found from its signed volume); they were "
                         "re-oriented to face the room — nothing to fix, the file's winding may be either way");
    }
    double volume = 0;
    for (int c = 0; c < componentCount; ++c) volume -= signedVolume[c];
    g.volume_ = volume;

    if (!g.openEdges_.empty()) {
        std::string where;
        const size_t show = std::min<size_t>(3, g.openEdges_.size());
        for (size_t i = 0; i < show; ++i)
            where += (i ? "; " : "") + FormatPoint(scene, g.openEdges_[i].a) + "-" + FormatPoint(scene, g.openEdges_[i].b) +
                     " (face line " + std::to_string(g.openEdges_[i].objLine) + ")";
        diag.Warning(MeshLoc(scene, g.openEdges_[0].objLine),
                     "the model is open: " + std::to_string(g.openEdges_.size()) +
                         " edge(s) belong to only one face, e.g. " + where +
                         (g.openEdges_.size() > show ? ", ..." : "") +
                         "; rays leak through gaps — close the gaps or share vertices along these edges");
    }
    if (nonManifold > 0)
        diag.Warning(MeshLoc(scene, 0), std::to_string(nonManifold) +
                                            " edge(s) are shared by more than two faces (non-manifold); check for "
                                            "duplicated or intersecting surfaces");

    // Bounds and a units plausibility check.
    g.boundsMin_ = g.boundsMax_ = mesh.vertices[mesh.triangles[0][0]];
    for (const auto& tri : mesh.triangles)
        for (uint32_t v : tri) {
            g.boundsMin_ = g.boundsMin_.cwiseMin(mesh.vertices[v]);
            g.boundsMax_ = g.boundsMax_.cwiseMax(mesh.vertices[v]);
        }
    const double extent = (g.boundsMax_ - g.boundsMin_).maxCoeff();
    SourceLoc sceneLoc{scene.scenePath, 0, 0, ""};
    char buf[160];
    if (extent > kLargestPlausibleM) {
        std::snprintf(buf, sizeof buf, "the model is %.0f m across, which is unusually large for a room", extent);
        diag.Warning(sceneLoc, std::string(buf) + "; was it exported in mm or cm? set [model] units = \"mm\" (or \"cm\")");
    } else if (extent < kSmallestPlausibleM) {
        std::snprintf(buf, sizeof buf, "the model is only %.3f m across", extent);
        diag.Warning(sceneLoc, std::string(buf) + "; was it exported in other units? check [model] units (m, cm, mm, in, ft)");
    }

    // Planar faces: union adjacent coplanar triangles of one material and group.
    std::vector<Vec3> triNormal(nTri);
    for (uint32_t t = 0; t < nTri; ++t) triNormal[t] = mesh.TriangleCross(t).normalized();
    UnionFind uf(nTri);
    for (const auto& [key, uses] : edges) {
        if (uses.size() != 2) continue;
        const uint32_t a = uses[0].triangle, b = uses[1].triangle;
        if (mesh.triangleMaterial[a] != mesh.triangleMaterial[b] || mesh.triangleGroup[a] != mesh.triangleGroup[b])
            continue;
        if (triNormal[a].dot(triNormal[b]) < kCoplanarCos) continue;
        bool coplanar = true;
        const double off = triNormal[a].dot(mesh.Vertex(a, 0));
        for (int k = 0; k < 3; ++k)
            coplanar &= std::abs(triNormal[a].dot(mesh.Vertex(b, k)) - off) < kCoplanarDistM;
        if (coplanar) uf.Unite(a, b);
    }
    std::unordered_map<int, int> faceOfRoot;
    g.triangleFace_.assign(nTri, -1);
    for (uint32_t t = 0; t < nTri; ++t) {
        const int root = uf.Find(t);
        auto [it, inserted] = faceOfRoot.emplace(root, static_cast<int>(g.faces_.size()));
        if (inserted) {
            Face f;
            f.material = mesh.triangleMaterial[t];
            f.group = mesh.triangleGroup[t];
            f.normal = Vec3::Zero();
            g.faces_.push_back(f);
        }
        Face& f = g.faces_[it->second];
        f.triangles.push_back(t);
        const Vec3 cross = mesh.TriangleCross(t);
        const double area = 0.5 * cross.norm();
        f.normal += cross;  // area-weighted (|cross| = 2 area)
        f.centroid += area * (mesh.Vertex(t, 0) + mesh.Vertex(t, 1) + mesh.Vertex(t, 2)) / 3.0;
        f.area += area;
        g.triangleFace_[t] = it->second;
    }
    for (Face& f : g.faces_) {
        f.normal.normalize();
        f.centroid /= f.area;
        f.offset = f.normal.dot(f.centroid);
    }

    // Areas per material and group.
    g.areaPerMaterial_.assign(scene.materials.size(), 0.0);
    g.areaPerGroup_.assign(mesh.groupNames.size(), 0.0);
    for (uint32_t t = 0; t < nTri; ++t) {
        const double a = mesh.TriangleArea(t);
        g.surfaceArea_ += a;
        if (mesh.triangleMaterial[t] >= 0 && mesh.triangleMaterial[t] < static_cast<int>(g.areaPerMaterial_.size()))
            g.areaPerMaterial_[mesh.triangleMaterial[t]] += a;
        if (mesh.triangleGroup[t] >= 0 && mesh.triangleGroup[t] < static_cast<int>(g.areaPerGroup_.size()))
            g.areaPerGroup_[mesh.triangleGroup[t]] += a;
    }

    g.mesh_ = &scene.mesh;
    g.rays_ = std::make_unique<RayScene>(mesh);
    return g;
}

bool Geometry::Contains(const Vec3& p) const {
    // Parity of crossings along three fixed, non-axis-aligned directions; majority vote makes
    // a ray grazing an edge harmless.
    static const Vec3 kDirs[3] = {Vec3(0.5773, 0.5774, 0.5775).normalized(), Vec3(-0.6234, 0.2311, 0.7469).normalized(),
                                  Vec3(0.1713, -0.9311, 0.3219).normalized()};
    int inside = 0;
    for (const Vec3& d : kDirs) {
        int crossings = 0;
        double t0 = 0;
        for (int guard = 0; guard < 10000; ++guard) {
            auto hit = rays_->Intersect(p, d, t0);
            if (!hit) break;
            ++crossings;
            t0 = hit->t + 1e-5;
        }
        inside += crossings % 2;
    }
    return inside >= 2;
}

namespace {
/* Distance from p to triangle (a, b, c) (Ericson, Real-Time Collision Detection, 5.1.5). */
double PointTriangleDistance(const Vec3& p, const Vec3& a, const Vec3& b, const Vec3& c) {
    const Vec3 ab = b - a, ac = c - a, ap = p - a;
    const double d1 = ab.dot(ap), d2 = ac.dot(ap);
    if (d1 <= 0 && d2 <= 0) return (p - a).norm();
    const Vec3 bp = p - b;
    const double d3 = ab.dot(bp), d4 = ac.dot(bp);
    if (d3 >= 0 && d4 <= d3) return (p - b).norm();
    const double vc = d1 * d4 - d3 * d2;
    if (vc <= 0 && d1 >= 0 && d3 <= 0) return (p - (a + ab * (d1 / (d1 - d3)))).norm();
    const Vec3 cp = p - c;
    const double d5 = ab.dot(cp), d6 = ac.dot(cp);
    if (d6 >= 0 && d5 <= d6) return (p - c).norm();
    const double vb = d5 * d2 - d1 * d6;
    if (vb <= 0 && d2 >= 0 && d6 <= 0) return (p - (a + ac * (d2 / (d2 - d6)))).norm();
    const double va = d3 * d6 - d5 * d4;
    if (va <= 0 && (d4 - d3) >= 0 && (d5 - d6) >= 0)
        return (p - (b + (c - b) * ((d4 - d3) / ((d4 - d3) + (d5 - d6))))).norm();
    const double denom = 1.0 / (va + vb + vc);
    return (p - (a + ab * (vb * denom) + ac * (vc * denom))).norm();
}
}  // namespace

double Geometry::DistanceToSurface(const Vec3& p) const {
    double best = 1e300;
    for (size_t t = 0; t < mesh_->TriangleCount(); ++t)
        best = std::min(best, PointTriangleDistance(p, mesh_->Vertex(t, 0), mesh_->Vertex(t, 1), mesh_->Vertex(t, 2)));
    return best;
}

}  // namespace hallwright
