// Balcony overhangs: seats under a slab that has room volume above it receive less of the
// hall's reverberant sound. Guideline (Barron, Auditorium Acoustics and Architectural Design,
// 1993/2010, from memory, REFERENCES Part A section 6): depth D <= H for concert halls and
// D <= 2H for theatres, D from the overhang's front edge to the rear wall beneath it, H the
// opening height from the floor to the soffit at the front edge.
#include <algorithm>
#include <cmath>
#include <map>
#include <optional>
#include <set>

#include "hallwright/review.h"
#include "review/review_util.h"

namespace hallwright {

namespace {

using review::Vec2;

/* A soffit faces down into the room: normal . up below -0.3 (about 17 deg or more from
   vertical; hallwright's own criterion, no source). */
constexpr double kDownFacing = 0.3;
/* Rays restart this far past a surface (m). */
constexpr double kStepM = 1e-4;
/* H is measured this far behind the front edge, under the soffit (m). */
constexpr double kBehindEdgeM = 0.01;

const Vec3 kUp(0, 1, 0);

/* The soffit face above p when p is under an overhang: a downward-facing surface above, then
   solid, then room volume again above the slab. */
std::optional<int> OverhangAbove(const Geometry& g, const Vec3& p) {
    const auto& faces = g.Faces();
    const auto& triFace = g.TriangleFace();
    auto faceOf = [&](uint32_t tri) { return triFace[tri]; };
    auto h1 = g.Rays().Intersect(p, kUp, kStepM);
    if (!h1) return std::nullopt;
    const int f1 = faceOf(h1->triangle);
    if (f1 < 0 || faces[f1].normal.dot(kUp) > -kDownFacing) return std::nullopt;
    const Vec3 p1 = p + kUp * h1->t;
    auto h2 = g.Rays().Intersect(p1, kUp, kStepM);
    if (!h2) return std::nullopt;
    const int f2 = faceOf(h2->triangle);
    if (f2 < 0 || faces[f2].normal.dot(kUp) <= 0) return std::nullopt;  // back of the slab's top
    const Vec3 p2 = p1 + kUp * h2->t;
    auto h3 = g.Rays().Intersect(p2, kUp, kStepM);
    if (!h3) return std::nullopt;
    const int f3 = faceOf(h3->triangle);
    if (f3 < 0 || faces[f3].normal.dot(kUp) >= 0) return std::nullopt;  // room volume above
    return f1;
}

Vec2 Plan(const Vec3& p) { return Vec2(p.x(), p.z()); }

struct SeatMeasure {
    int receiver;
    double depth, height;
    Vec3 edgePoint;
};

}  // namespace

std::vector<Finding> ReviewOverhangs(const Scene& scene, const Geometry& geometry, const ReviewOptions& options) {
    if (scene.sources.empty()) return {};
    const auto& faces = geometry.Faces();
    const Mesh& mesh = geometry.GetMesh();

    // Seats under an overhang, and the soffit faces above them.
    std::map<int, int> soffitOf;  // receiver -> face
    for (size_t r = 0; r < scene.receivers.size(); ++r)
        if (auto f = OverhangAbove(geometry, scene.receivers[r].position)) soffitOf[static_cast<int>(r)] = *f;
    if (soffitOf.empty()) return {};

    // Soffits: the faces found, grown through adjacent downward-facing faces, as components.
    const auto weld = review::WeldedVertexIds(mesh);
    const auto ids = review::FaceVertexIds(geometry, weld);
    std::vector<int> component(faces.size(), -1);
    int componentCount = 0;
    for (const auto& [r, f0] : soffitOf) {
        if (component[f0] >= 0) continue;
        std::vector<int> stack = {f0};
        component[f0] = componentCount;
        while (!stack.empty()) {
            const int f = stack.back();
            stack.pop_back();
            for (size_t g = 0; g < faces.size(); ++g)
                if (component[g] < 0 && faces[g].normal.dot(kUp) < -kDownFacing &&
                    review::SharedCount(ids[f], ids[g]) >= 2) {
                    component[g] = componentCount;
                    stack.push_back(static_cast<int>(g));
                }
        }
        ++componentCount;
    }

    std::vector<Finding> out;
    for (int comp = 0; comp < componentCount; ++comp) {
        // Plan outline of the soffit: edges used by one triangle of the component only.
        std::map<std::pair<uint32_t, uint32_t>, std::pair<int, std::pair<Vec3, Vec3>>> edges;
        std::vector<int> compFaces;
        for (size_t f = 0; f < faces.size(); ++f) {
            if (component[f] != comp) continue;
            compFaces.push_back(static_cast<int>(f));
            for (uint32_t t : faces[f].triangles)
                for (int k = 0; k < 3; ++k) {
                    const uint32_t va = mesh.triangles[t][k], vb = mesh.triangles[t][(k + 1) % 3];
                    auto key = std::minmax(weld[va], weld[vb]);
                    auto& e = edges[{key.first, key.second}];
                    e.first += 1;
                    e.second = {mesh.vertices[va], mesh.vertices[vb]};
                }
        }
        std::vector<std::pair<Vec2, Vec2>> outline;
        for (const auto& [key, e] : edges)
            if (e.first == 1) outline.emplace_back(Plan(e.second.first), Plan(e.second.second));

        std::vector<SeatMeasure> measures;
        for (const auto& [r, f0] : soffitOf) {
            if (component[f0] != comp) continue;
            const Receiver& rec = scene.receivers[r];
            // Toward the sound: the facing source, else the first source.
            const Source* src = &scene.sources[0];
            for (const Source& s : scene.sources)
                if (s.name == rec.facingSource) src = &s;
            const Vec2 rp = Plan(rec.position);
            Vec2 u = Plan(src->position) - rp;
            if (u.norm() < 1e-9) continue;
            u.normalize();
            // The front edge: the first outline edge crossed on the way toward the source.
            double tBest = 1e300;
            Vec2 ea, eb;
            for (const auto& [a, b] : outline) {
                const Vec2 e = b - a;
                const double den = u.x() * e.y() - u.y() * e.x();
                if (std::abs(den) < 1e-12) continue;
                const Vec2 w = a - rp;
                const double t = (w.x() * e.y() - w.y() * e.x()) / den;
                const double s = (w.x() * u.y() - w.y() * u.x()) / den;
                if (t > 1e-9 && s >= -1e-9 && s <= 1 + 1e-9 && t < tBest) {
                    tBest = t;
                    ea = a;
                    eb = b;
                }
            }
            if (tBest > 1e299) continue;
            // Perpendicular to the edge, toward the source.
            Vec2 perp(-(eb - ea).y(), (eb - ea).x());
            perp.normalize();
            if (perp.dot(u) < 0) perp = -perp;
            const double toEdge = (ea - rp).dot(perp);
            const Vec3 dir(perp.x(), 0, perp.y());
            // H: floor to soffit just behind the front edge.
            const Vec3 g = rec.position + dir * (toEdge - kBehindEdgeM);
            auto up = geometry.Rays().Intersect(g, kUp, kStepM);
            auto down = geometry.Rays().Intersect(g, -kUp, kStepM);
            // D: from the front edge back to the wall beneath the overhang.
            auto back = geometry.Rays().Intersect(rec.position, -dir, kStepM);
            if (!up || !down || !back) continue;
            const double height = up->t + down->t;
            const double depth = toEdge + back->t;
            if (height <= 0) continue;
            measures.push_back({r, depth, height, g + kUp * up->t});
        }
        if (measures.empty()) continue;
        // The governing seat: the largest D/H.
        const SeatMeasure* worst = &measures[0];
        for (const SeatMeasure& m : measures)
            if (m.depth / m.height > worst->depth / worst->height + 1e-12) worst = &m;
        const bool theatre = options.venue == Venue::kTheatre;
        const double limit = theatre ? 2.0 : 1.0;  // Barron (from memory), REFERENCES Part A 6
        const double ratio = worst->depth / worst->height;
        const double maxDepth = std::max_element(measures.begin(), measures.end(), [](auto& a, auto& b) {
                                    return a.depth < b.depth;
                                })->depth;

        Finding f;
        f.rule = "overhang";
        f.severity = ratio <= limit ? "info" : "warning";
        const std::string venue = theatre ? "theatre" : "concert";
        f.summary = "balcony overhang over " + std::to_string(measures.size()) + " seats: depth D = " +
                    review::Fixed(worst->depth, 2) + " m, opening height H = " + review::Fixed(worst->height, 2) +
                    " m, D/H = " + review::Fixed(ratio, 2) + (ratio <= limit ? " within " : " exceeds ") +
                    "the " + venue + " guideline D/H <= " + review::Fixed(limit, 0);
        f.surfaces = review::GroupNames(scene, geometry, compFaces);
        for (const SeatMeasure& m : measures) f.seats.push_back(scene.receivers[m.receiver].name);
        std::sort(f.seats.begin(), f.seats.end());
        f.values = {{"depth_m", worst->depth},
                    {"height_m", worst->height},
                    {"ratio", ratio},
                    {"limit", limit},
                    {"venue", venue},
                    {"max_depth_m", maxDepth},
                    {"front_edge", review::ModelPoint(scene, worst->edgePoint)},
                    {"governing_seat", scene.receivers[worst->receiver].name},
                    {"seats_under", static_cast<double>(measures.size())}};
        if (ratio > limit)
            f.remedies = {"reduce the overhang depth or raise the soffit so that D/H <= " + review::Fixed(limit, 0),
                          "slope the soffit up toward the rear so it reflects sound onto the rear seats",
                          "keep the soffit and the rear wall beneath it hard and reflecting"};
        out.push_back(std::move(f));
    }
    return out;
}

}  // namespace hallwright
