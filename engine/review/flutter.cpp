// Flutter: sound bouncing between two opposing, acoustically hard, nearly parallel surfaces
// repeats with the period 2d/c (REFERENCES Part A section 6).
#include <algorithm>
#include <cmath>
#include <numeric>

#include "util/union_find.h"
#include "hallwright/air.h"
#include "hallwright/review.h"
#include "review/review_util.h"

namespace hallwright {

namespace {

using review::Vec2;

/* A surface is hard when it absorbs little and scatters little at 1-4 kHz, where flutter is
   heard: mean alpha below 0.2 and mean scattering below 0.5 (common practice, no source). */
constexpr double kHardAlpha = 0.2;
constexpr double kHardScattering = 0.5;
/* Opposing pairs up to this angle get an "info" finding when they pass (they were checked). */
constexpr double kReportedAngleDeg = 15.0;
/* The overlap (projected along the pair's axis) must cover half of the smaller surface and
   at least (d/2)^2, so that several round trips stay on the surfaces (hallwright's own
   criterion, no source). */
constexpr double kMinOverlapFraction = 0.5;
constexpr double kMinOverlapPerD2 = 0.25;
/* Coplanar touching faces count as one surface (regrouping the model changes nothing). */
const double kCoplanarCos = std::cos(0.1 * M_PI / 180.0);
constexpr double kCoplanarOffsetM = 1e-3;

struct Surface {
    Vec3 normal = Vec3::Zero();
    double offset = 0;
    double area = 0;
    Vec3 centroid = Vec3::Zero();
    std::vector<int> faces;
    double alpha = 0, scattering = 0;  // area-weighted means at 1-4 kHz
};

std::vector<Surface> HardSurfaces(const Scene& scene, const Geometry& geometry) {
    const auto& faces = geometry.Faces();
    std::vector<int> hard;
    for (size_t f = 0; f < faces.size(); ++f) {
        const Material& m = scene.materials[faces[f].material];
        if (review::Mean1To4k(m.absorption) < kHardAlpha && review::Mean1To4k(m.scattering) < kHardScattering)
            hard.push_back(static_cast<int>(f));
    }
    const auto weld = review::WeldedVertexIds(geometry.GetMesh());
    const auto ids = review::FaceVertexIds(geometry, weld);
    UnionFind uf(hard.size());
    for (size_t i = 0; i < hard.size(); ++i)
        for (size_t j = i + 1; j < hard.size(); ++j) {
            const Face& a = faces[hard[i]];
            const Face& b = faces[hard[j]];
            if (a.normal.dot(b.normal) > kCoplanarCos && std::abs(a.offset - b.offset) < kCoplanarOffsetM &&
                review::SharedCount(ids[hard[i]], ids[hard[j]]) > 0)
                uf.Unite(static_cast<int>(i), static_cast<int>(j));
        }
    std::vector<Surface> out;
    std::vector<int> slot(hard.size(), -1);
    for (size_t i = 0; i < hard.size(); ++i) {
        const int root = uf.Find(static_cast<int>(i));
        if (slot[root] < 0) {
            slot[root] = static_cast<int>(out.size());
            out.emplace_back();
        }
        Surface& s = out[slot[root]];
        const Face& f = faces[hard[i]];
        const Material& m = scene.materials[f.material];
        s.faces.push_back(hard[i]);
        s.normal += f.normal * f.area;
        s.offset += f.offset * f.area;
        s.centroid += f.centroid * f.area;
        s.alpha += review::Mean1To4k(m.absorption) * f.area;
        s.scattering += review::Mean1To4k(m.scattering) * f.area;
        s.area += f.area;
    }
    for (Surface& s : out) {
        s.normal.normalize();
        s.offset /= s.area;
        s.centroid /= s.area;
        s.alpha /= s.area;
        s.scattering /= s.area;
    }
    return out;
}

/* Triangles of a surface projected on the plane spanned by e1, e2. */
std::vector<std::array<Vec2, 3>> Project(const Geometry& geometry, const Surface& s, const Vec3& e1, const Vec3& e2) {
    const Mesh& mesh = geometry.GetMesh();
    std::vector<std::array<Vec2, 3>> out;
    for (int f : s.faces)
        for (uint32_t t : geometry.Faces()[f].triangles) {
            std::array<Vec2, 3> tri;
            for (int k = 0; k < 3; ++k) {
                const Vec3& p = mesh.vertices[mesh.triangles[t][k]];
                tri[k] = Vec2(p.dot(e1), p.dot(e2));
            }
            out.push_back(tri);
        }
    return out;
}

double Area2D(const std::array<Vec2, 3>& t) {
    return 0.5 * std::abs((t[1] - t[0]).x() * (t[2] - t[0]).y() - (t[1] - t[0]).y() * (t[2] - t[0]).x());
}

bool Covers(const std::vector<std::array<Vec2, 3>>& tris, const Vec2& p) {
    for (const auto& t : tris)
        if (review::InTriangle(p, t)) return true;
    return false;
}

}  // namespace

std::vector<Finding> ReviewFlutter(const Scene& scene, const Geometry& geometry, const ReviewOptions& options) {
    const std::vector<Surface> surfaces = HardSurfaces(scene, geometry);
    const double c = SpeedOfSound(scene.air.temperatureC);
    struct Candidate {
        double separation, overlap;
        Finding finding;
    };
    std::vector<Candidate> found;
    for (size_t i = 0; i < surfaces.size(); ++i)
        for (size_t j = i + 1; j < surfaces.size(); ++j) {
            const Surface& a = surfaces[i];
            const Surface& b = surfaces[j];
            // Opposing: normals (into the room) nearly antiparallel, each in front of the other.
            const double cosOpp = std::clamp(-a.normal.dot(b.normal), -1.0, 1.0);
            const double angleDeg = std::acos(cosOpp) * 180.0 / M_PI;
            if (angleDeg > kReportedAngleDeg) continue;
            if (a.normal.dot(b.centroid) - a.offset <= 0 || b.normal.dot(a.centroid) - b.offset <= 0) continue;
            // Overlap of the two surfaces seen along the pair's axis.
            const Vec3 axis = (a.normal - b.normal).normalized();
            Vec3 e1, e2;
            review::Basis(axis, e1, e2);
            const auto ta = Project(geometry, a, e1, e2);
            const auto tb = Project(geometry, b, e1, e2);
            double areaA = 0, areaB = 0, overlap = 0;
            Vec2 weighted = Vec2::Zero();
            for (const auto& t : ta) areaA += Area2D(t);
            for (const auto& t : tb) areaB += Area2D(t);
            for (const auto& x : ta)
                for (const auto& y : tb) {
                    Vec2 cen;
                    const double o = review::TriangleOverlap(x, y, &cen);
                    if (o > 0) {
                        overlap += o;
                        weighted += cen * o;
                    }
                }
            if (overlap <= 0) continue;
            const Vec2 oc = weighted / overlap;
            // Separation along the axis through the centre of the overlap.
            const Vec3 q = e1 * oc.x() + e2 * oc.y();
            const double tA = (a.offset - a.normal.dot(q)) / a.normal.dot(axis);
            const double tB = (b.offset - b.normal.dot(q)) / b.normal.dot(axis);
            const double d = std::abs(tB - tA);
            if (overlap < kMinOverlapFraction * std::min(areaA, areaB) || overlap < kMinOverlapPerD2 * d * d) continue;

            // Seats between the two surfaces, inside the overlap.
            std::vector<std::string> seats;
            for (const Receiver& r : scene.receivers) {
                if (a.normal.dot(r.position) - a.offset <= 0 || b.normal.dot(r.position) - b.offset <= 0) continue;
                const Vec2 p(r.position.dot(e1), r.position.dot(e2));
                if (Covers(ta, p) && Covers(tb, p)) seats.push_back(r.name);
            }
            std::vector<int> faceList = a.faces;
            faceList.insert(faceList.end(), b.faces.begin(), b.faces.end());

            Finding f;
            f.rule = "flutter";
            const bool flutters = angleDeg <= options.flutterMaxAngleDeg;
            f.severity = flutters ? "warning" : "info";
            const double period = 2.0 * d / c;
            if (flutters)
                f.summary = "flutter echo likely between two hard surfaces " + review::Fixed(d, 1) + " m apart, " +
                            review::Fixed(angleDeg, 1) + " deg from parallel (limit " +
                            review::Fixed(options.flutterMaxAngleDeg, 1) + " deg): repetition every " +
                            review::Fixed(period * 1000.0, 1) + " ms";
            else
                f.summary = "opposing hard surfaces " + review::Fixed(d, 1) + " m apart are splayed " +
                            review::Fixed(angleDeg, 1) + " deg, more than the " +
                            review::Fixed(options.flutterMaxAngleDeg, 1) + " deg needed: no flutter expected";
            f.surfaces = review::GroupNames(scene, geometry, faceList);
            if (flutters) f.seats = seats;  // a passing pair needs no seat list
            f.values = {{"separation_m", d},
                        {"period_s", period},
                        {"angle_deg", angleDeg},
                        {"limit_deg", options.flutterMaxAngleDeg},
                        {"overlap_m2", overlap},
                        {"alpha_1k_4k", std::vector<double>{a.alpha, b.alpha}},
                        {"scattering_1k_4k", std::vector<double>{a.scattering, b.scattering}},
                        {"seats_between", static_cast<double>(seats.size())}};
            if (flutters)
                f.remedies = {"absorb one of the two surfaces (alpha above 0.2 at 1-4 kHz)",
                              "make one of them diffusing (scattering above 0.5 at 1-4 kHz)",
                              "splay or tilt one of them by more than " +
                                  review::Fixed(options.flutterMaxAngleDeg, 0) + " deg"};
            found.push_back({d, overlap, std::move(f)});
        }
    // Order independent of face numbering: warnings first, then by separation and overlap.
    std::stable_sort(found.begin(), found.end(), [](const Candidate& x, const Candidate& y) {
        if (x.finding.severity != y.finding.severity) return x.finding.severity == "warning";
        if (std::abs(x.separation - y.separation) > 1e-6) return x.separation < y.separation;
        return x.overlap > y.overlap;
    });
    std::vector<Finding> out;
    for (Candidate& cnd : found) out.push_back(std::move(cnd.finding));
    return out;
}

}  // namespace hallwright
