// Focusing: a concave surface (curved wall, vault or dome made of facets) concentrates its
// reflections near the image given by the paraxial mirror equation 1/s + 1/s' = 2/R (memory:
// Kuttruff, Room Acoustics; REFERENCES Part A section 6): about R/2 for distant sources, the
// centre of curvature itself for a source near it.
#include <algorithm>
#include <cmath>
#include <numeric>

#include <Eigen/Dense>

#include "hallwright/review.h"
#include "review/review_util.h"

namespace hallwright {

namespace {

/* Adjacent facets belong to one curved patch when their normals turn by 0.5 - 15 deg toward
   the room: larger folds are corners between flat walls, each a plane mirror, not a curve
   (hallwright's own criterion, no source). */
constexpr double kMinTurnDeg = 0.5;
constexpr double kMaxTurnDeg = 15.0;
/* A patch needs at least this many facets to define a curvature. */
constexpr int kMinFacets = 3;
/* The facet planes' distances from the fitted centre may differ by at most 20 % (otherwise
   the patch is not circular; own criterion, no source). */
constexpr double kMaxRadiusSpread = 0.2;
/* A cylinder: the normals spread in one direction only (smallest eigenvalue of the normal
   scatter below a quarter of the middle one). */
constexpr double kCylinderEigenRatio = 0.25;
/* Focal region: within max(1 m, 0.1 R) of the focus (own criterion, no source). */
constexpr double kFocalFraction = 0.1;
constexpr double kMinFocalRadiusM = 1.0;

struct Patch {
    std::vector<int> faces;
    Vec3 centre = Vec3::Zero();
    Vec3 axis = Vec3::Zero();  // zero for a sphere
    Vec3 meanNormal = Vec3::Zero();
    double radius = 0, area = 0;
    double axialMin = 0, axialMax = 0;  // extent of the patch along the axis (cylinder)
};

/* Distance from p to the focal region (a point, or a line along the axis for a cylinder). */
double DistanceToFocus(const Patch& patch, const Vec3& focus, const Vec3& p) {
    if (patch.axis.isZero()) return (p - focus).norm();
    const Vec3 d = p - focus;
    const double along = d.dot(patch.axis);
    const double axial = p.dot(patch.axis);
    const double outside = std::max({0.0, patch.axialMin - axial, axial - patch.axialMax});
    return std::hypot((d - patch.axis * along).norm(), outside);
}

std::vector<Patch> ConcavePatches(const Geometry& geometry) {
    const auto& faces = geometry.Faces();
    const auto weld = review::WeldedVertexIds(geometry.GetMesh());
    const auto ids = review::FaceVertexIds(geometry, weld);
    const double cosMin = std::cos(kMinTurnDeg * M_PI / 180.0), cosMax = std::cos(kMaxTurnDeg * M_PI / 180.0);
    std::vector<int> parent(faces.size());
    std::iota(parent.begin(), parent.end(), 0);
    auto find = [&](int x) {
        while (parent[x] != x) x = parent[x] = parent[parent[x]];
        return x;
    };
    for (size_t i = 0; i < faces.size(); ++i)
        for (size_t j = i + 1; j < faces.size(); ++j) {
            const double c = faces[i].normal.dot(faces[j].normal);
            if (c > cosMin || c < cosMax) continue;
            if (review::SharedCount(ids[i], ids[j]) < 2) continue;  // share an edge
            // Concave toward the room: each facet lies in front of the other's plane.
            if (faces[i].SignedDistance(faces[j].centroid) <= 1e-6 || faces[j].SignedDistance(faces[i].centroid) <= 1e-6)
                continue;
            const int a = find(static_cast<int>(i)), b = find(static_cast<int>(j));
            if (a != b) parent[std::max(a, b)] = std::min(a, b);
        }
    std::vector<std::vector<int>> groups(faces.size());
    for (size_t i = 0; i < faces.size(); ++i) groups[find(static_cast<int>(i))].push_back(static_cast<int>(i));

    std::vector<Patch> out;
    for (const auto& members : groups) {
        if (static_cast<int>(members.size()) < kMinFacets) continue;
        // Centre: the point nearest (least squares, area-weighted) to the facets' normal lines.
        Eigen::Matrix3d M = Eigen::Matrix3d::Zero(), N = Eigen::Matrix3d::Zero();
        Eigen::Vector3d rhs = Eigen::Vector3d::Zero();
        Patch p;
        p.faces = members;
        for (int f : members) {
            const Face& face = faces[f];
            const Eigen::Matrix3d proj = Eigen::Matrix3d::Identity() - face.normal * face.normal.transpose();
            M += face.area * proj;
            rhs += face.area * proj * face.centroid;
            N += face.area * face.normal * face.normal.transpose();
            p.meanNormal += face.area * face.normal;
            p.area += face.area;
        }
        p.meanNormal.normalize();
        Eigen::SelfAdjointEigenSolver<Eigen::Matrix3d> eigN(N / p.area);
        const bool cylinder = eigN.eigenvalues()[0] < kCylinderEigenRatio * eigN.eigenvalues()[1];
        if (cylinder) {
            // The normal lines meet along the axis: solve in the plane across it, centred on the
            // patch's mean position along the axis.
            p.axis = eigN.eigenvectors().col(0).normalized();
            Vec3 meanCentroid = Vec3::Zero();
            for (int f : members) meanCentroid += faces[f].area * faces[f].centroid;
            meanCentroid /= p.area;
            const Eigen::Matrix3d A = M + p.area * p.axis * p.axis.transpose();
            p.centre = A.ldlt().solve(rhs + p.area * p.axis * p.axis.dot(meanCentroid));
            // Make the axis direction canonical (independent of the eigen solver's sign).
            const Vec3 ref(0.5773, 0.5774, 0.5775);
            if (p.axis.dot(ref) < 0) p.axis = -p.axis;
            const Mesh& mesh = geometry.GetMesh();
            p.axialMin = 1e300;
            p.axialMax = -1e300;
            for (int f : members)
                for (uint32_t t : faces[f].triangles)
                    for (int k = 0; k < 3; ++k) {
                        const double a = mesh.vertices[mesh.triangles[t][k]].dot(p.axis);
                        p.axialMin = std::min(p.axialMin, a);
                        p.axialMax = std::max(p.axialMax, a);
                    }
        } else {
            if (std::abs(M.determinant()) < 1e-12 * std::pow(p.area, 3)) continue;
            p.centre = M.ldlt().solve(rhs);
        }
        // Radius: mean distance of the facet planes from the centre; they must agree.
        double rMin = 1e300, rMax = -1e300, rSum = 0;
        for (int f : members) {
            const double r = faces[f].SignedDistance(p.centre);
            rMin = std::min(rMin, r);
            rMax = std::max(rMax, r);
            rSum += faces[f].area * r;
        }
        p.radius = rSum / p.area;
        if (rMin <= 0 || (rMax - rMin) > kMaxRadiusSpread * p.radius) continue;
        out.push_back(p);
    }
    return out;
}

}  // namespace

std::vector<std::vector<int>> review::ConcavePatchFaces(const Geometry& geometry) {
    std::vector<std::vector<int>> out;
    for (const Patch& p : ConcavePatches(geometry)) out.push_back(p.faces);
    return out;
}

std::vector<Finding> ReviewFocusing(const Scene& scene, const Geometry& geometry, const ReviewOptions& options) {
    std::vector<Finding> out;
    for (const Patch& patch : ConcavePatches(geometry)) {
        const double R = patch.radius;
        const double focalRadius = std::max(kMinFocalRadiusM, kFocalFraction * R);
        Finding f;
        f.rule = "focusing";
        f.surfaces = review::GroupNames(scene, geometry, patch.faces);
        f.values = {{"radius_m", R},
                    {"centre", review::ModelPoint(scene, patch.centre)},
                    {"shape", std::string(patch.axis.isZero() ? "sphere" : "cylinder")},
                    {"facets", static_cast<double>(patch.faces.size())},
                    {"area_m2", patch.area},
                    {"focal_radius_m", focalRadius}};
        if (!patch.axis.isZero())
            f.values.emplace_back("axis", std::vector<double>{scene.DirectionToModel(patch.axis).x(),
                                                              scene.DirectionToModel(patch.axis).y(),
                                                              scene.DirectionToModel(patch.axis).z()});
        bool harmful = false, focusSet = false;
        std::vector<std::string> seats, notes;
        for (const Source& src : scene.sources) {
            // The centre of curvature seen from this source (its foot on the axis).
            Vec3 c = patch.centre;
            if (!patch.axis.isZero()) c += patch.axis * patch.axis.dot(src.position - patch.centre);
            Vec3 a = src.position - c;
            if (!patch.axis.isZero()) a -= patch.axis * patch.axis.dot(a);
            Vec3 focus;
            double s, sPrime;
            if (a.norm() < 1e-9) {
                // Source at the centre of curvature: imaged onto itself.
                s = R;
                sPrime = R;
                focus = src.position;
            } else {
                const Vec3 ah = a.normalized();
                // The vertex: where the line through the source and the centre meets the mirror.
                const Vec3 vertex = c - (ah.dot(patch.meanNormal) >= 0 ? 1.0 : -1.0) * R * ah;
                s = (src.position - vertex).dot((c - vertex).normalized());
                if (s <= 0) continue;  // behind the surface
                if (2.0 * s - R <= 1e-9) {
                    notes.push_back(src.name + ": virtual image (s < R/2), no real focus");
                    continue;
                }
                sPrime = s * R / (2.0 * s - R);  // 1/s + 1/s' = 2/R
                focus = vertex + (c - vertex).normalized() * sPrime;
            }
            if (!focusSet) {
                f.values.emplace_back("focus", review::ModelPoint(scene, focus));
                f.values.emplace_back("source", src.name);
                f.values.emplace_back("source_distance_m", s);
                f.values.emplace_back("image_distance_m", sPrime);
                focusSet = true;
            }
            for (const Receiver& r : scene.receivers)
                if (DistanceToFocus(patch, focus, r.position) < focalRadius) seats.push_back(r.name);
            for (const Source& other : scene.sources)
                if (DistanceToFocus(patch, focus, other.position) < focalRadius) {
                    notes.push_back("the focus of " + src.name + " falls on the stage at source " + other.name);
                    harmful = true;
                }
        }
        std::sort(seats.begin(), seats.end());
        seats.erase(std::unique(seats.begin(), seats.end()), seats.end());
        harmful = harmful || !seats.empty();
        f.seats = seats;
        f.severity = harmful ? "warning" : "info";
        f.summary = std::string("concave ") + (patch.axis.isZero() ? "spherical" : "cylindrical") +
                    " surface of radius " + review::Fixed(R, 1) + " m (" + std::to_string(patch.faces.size()) +
                    " facets): " +
                    (harmful ? "its reflections focus on " + std::to_string(seats.size()) + " seats" +
                                   (notes.empty() ? std::string() : "; " + notes.front())
                             : std::string("no seat or source in its focal region"));
        if (harmful)
            f.remedies = {"make the concave surface diffusing (scattering above 0.5)",
                          "absorb it", "flatten it or change its radius so the focus falls outside the audience "
                                       "and the stage"};
        out.push_back(std::move(f));
    }
    return out;
}

}  // namespace hallwright
