// Seats and position checks: generates the seat grid of every [[seating]] block over the faces
// of its OBJ groups, checks every source and receiver against the closed model, and LoadRoom,
// which chains scene loading, geometry and seats.
//
// Seat grid (internal frame, +y up):
// - The grid lies in plan (x, z), aligned with the room's axes: its depth axis is the axis
//   (+-x or +-z) closest to the horizontal direction from the FIRST source to the centre of
//   the block's faces, its lateral axis points to the right as seen from that source looking
//   at the seats. Grid lines are `spacing_m` apart and centred on the faces' plan extent.
// - The floor height under each grid point is found by a vertical lookup in the group's
//   triangles (faces steeper than about 78 degrees, i.e. risers, are skipped; where faces
//   overlap in plan the highest is used); the ear is `ear_height_m` above it.
// - Names: <zone>-r<row>-s<seat>, two-digit 1-based. Rows are counted from the grid row
//   nearest the first source, counting only rows that have floor under them; seats from the
//   left as seen from the first source, counting grid points that have floor under them.
//   Seats then dropped (outside the room, or closer than 0.1 m to a surface) keep their
//   number free, so the remaining names do not shift between design options.
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <map>
#include <set>

#include "hallwright/room.h"
#include "hallwright/spatial_seats.h"
#include "scene/text_util.h"

namespace hallwright {
namespace {

constexpr double kMinClearanceM = 0.1;  // issue 2: sources/receivers at least 0.1 m from surfaces
constexpr double kMinUpNormal = 0.2;    // |n_y| below this: a riser or wall, not a seating floor

std::string ModelPoint(const Scene& scene, const Vec3& p) {
    const Vec3 m = scene.ToModel(p);
    char buf[128];
    std::snprintf(buf, sizeof buf, "(%.6g, %.6g, %.6g)", m.x(), m.y(), m.z());
    return buf;
}

std::string TwoDigits(int n) {
    char buf[16];
    std::snprintf(buf, sizeof buf, "%02d", n);
    return buf;
}

// Why a point cannot hold a source or receiver, or "" when it can.
std::string PlacementProblem(const Geometry& geometry, const Vec3& p, double* distance) {
    if (!geometry.Contains(p)) return "outside the room";
    const double d = geometry.DistanceToSurface(p);
    if (distance) *distance = d;
    if (d < kMinClearanceM) {
        char buf[96];
        std::snprintf(buf, sizeof buf, "only %.3g m from the nearest surface", d);
        return buf;
    }
    return "";
}

struct PlanTriangle {
    Eigen::Vector2d a, b, c;  // (x, z)
    double ya, yb, yc;
    Eigen::Vector2d lo, hi;   // plan bounds
};

// Height of the faces above plan point q (the highest one), or nothing if none lies there.
std::optional<double> FloorHeight(const std::vector<PlanTriangle>& tris, const Eigen::Vector2d& q) {
    std::optional<double> best;
    for (const auto& t : tris) {
        if (q.x() < t.lo.x() || q.x() > t.hi.x() || q.y() < t.lo.y() || q.y() > t.hi.y()) continue;
        const Eigen::Vector2d e1 = t.b - t.a, e2 = t.c - t.a, w = q - t.a;
        const double det = e1.x() * e2.y() - e1.y() * e2.x();
        if (std::abs(det) < 1e-12) continue;
        const double u = (w.x() * e2.y() - w.y() * e2.x()) / det;
        const double v = (e1.x() * w.y() - e1.y() * w.x()) / det;
        const double tol = 1e-9;
        if (u < -tol || v < -tol || u + v > 1 + tol) continue;
        const double y = t.ya + u * (t.yb - t.ya) + v * (t.yc - t.ya);
        if (!best || y > *best) best = y;
    }
    return best;
}

}  // namespace

void PlaceReceivers(Scene& scene, const Geometry& geometry, Diagnostics& diag) {
    const Mesh& mesh = geometry.GetMesh();
    const std::string meshName = std::filesystem::path(scene.meshPath).filename().string();

    // Explicit sources and receivers: outside the room or too close to a surface is an error.
    for (const auto& s : scene.sources) {
        const std::string problem = PlacementProblem(geometry, s.position, nullptr);
        if (!problem.empty())
            diag.Error(s.definedAt, "source '" + s.name + "' at " + ModelPoint(scene, s.position) + " is " + problem +
                                        "; move it inside the room, at least 0.1 m from every surface");
    }
    std::erase_if(scene.receivers, [](const Receiver& r) { return r.generated; });
    std::set<std::string> names;
    for (const auto& r : scene.receivers) {
        names.insert(r.name);
        const std::string problem = PlacementProblem(geometry, r.position, nullptr);
        if (!problem.empty())
            diag.Error(r.definedAt, "receiver '" + r.name + "' at " + ModelPoint(scene, r.position) + " is " + problem +
                                        "; move it inside the room, at least 0.1 m from every surface");
    }
    if (scene.seating.empty()) return;
    if (scene.sources.empty()) return;  // reported by the loader
    const Source& first = scene.sources.front();

    std::map<std::string, int> groupIndex;
    for (size_t g = 0; g < mesh.groupNames.size(); ++g) groupIndex.emplace(mesh.groupNames[g], static_cast<int>(g));
    std::vector<std::string> groupsWithFaces;
    {
        std::vector<int> count(mesh.groupNames.size(), 0);
        for (int g : mesh.triangleGroup)
            if (g >= 0 && g < static_cast<int>(count.size())) ++count[g];
        for (size_t g = 0; g < count.size(); ++g)
            if (count[g] > 0) groupsWithFaces.push_back(mesh.groupNames[g]);
    }

    for (const SeatingBlock& block : scene.seating) {
        // The block's faces: every triangle of the named groups that is not a riser.
        std::set<int> groups;
        bool ok = true;
        for (const auto& name : block.surfaces) {
            auto it = groupIndex.find(name);
            const bool hasFaces = it != groupIndex.end() &&
                                  std::find(groupsWithFaces.begin(), groupsWithFaces.end(), name) != groupsWithFaces.end();
            if (!hasFaces) {
                diag.Error(block.definedAt, "seating surface '" + name + "' of zone '" + block.zone + "' names no faces in " +
                                                meshName + text::DidYouMean(name, groupsWithFaces) +
                                                "; use the name of an OBJ group (g/o) that has faces: " +
                                                text::JoinList(groupsWithFaces));
                ok = false;
                continue;
            }
            groups.insert(it->second);
        }
        if (!ok) continue;
        std::vector<PlanTriangle> tris;
        Eigen::Vector2d centre = Eigen::Vector2d::Zero();
        double areaSum = 0;
        for (size_t t = 0; t < mesh.TriangleCount(); ++t) {
            if (!groups.count(mesh.triangleGroup[t])) continue;
            const Vec3 n = mesh.TriangleCross(t);
            if (!(n.norm() > 0) || std::abs(n.y()) < kMinUpNormal * n.norm()) continue;
            const Vec3 a = mesh.Vertex(t, 0), b = mesh.Vertex(t, 1), c = mesh.Vertex(t, 2);
            PlanTriangle pt{{a.x(), a.z()}, {b.x(), b.z()}, {c.x(), c.z()}, a.y(), b.y(), c.y(), {}, {}};
            pt.lo = pt.a.cwiseMin(pt.b).cwiseMin(pt.c);
            pt.hi = pt.a.cwiseMax(pt.b).cwiseMax(pt.c);
            const double area = 0.5 * n.norm();
            centre += area * (pt.a + pt.b + pt.c) / 3.0;
            areaSum += area;
            tris.push_back(pt);
        }
        if (tris.empty()) {
            diag.Error(block.definedAt, "the surfaces of seating zone '" + block.zone +
                                            "' have no floor-like faces (all are vertical); name the group of the floor");
            continue;
        }
        centre /= areaSum;

        // Grid axes: depth away from the first source, lateral to the source's right.
        const Eigen::Vector2d toBlock = centre - Eigen::Vector2d(first.position.x(), first.position.z());
        Eigen::Vector2d depth = std::abs(toBlock.x()) > std::abs(toBlock.y())
                                    ? Eigen::Vector2d(toBlock.x() >= 0 ? 1 : -1, 0)
                                    : Eigen::Vector2d(0, toBlock.y() >= 0 ? 1 : -1);
        // Right of a viewer looking along d with +y up is d x y; in plan (x, z): (-d_z, d_x).
        const Vec3 right3 = Vec3(depth.x(), 0, depth.y()).cross(Vec3::UnitY());
        const Eigen::Vector2d lateral(right3.x(), right3.z());
        double uLo = 1e300, uHi = -1e300, vLo = 1e300, vHi = -1e300;
        for (const auto& t : tris)
            for (const Eigen::Vector2d& p : {t.a, t.b, t.c}) {
                uLo = std::min(uLo, p.dot(depth));
                uHi = std::max(uHi, p.dot(depth));
                vLo = std::min(vLo, p.dot(lateral));
                vHi = std::max(vHi, p.dot(lateral));
            }
        const double s = block.spacingM;
        auto axis = [s](double lo, double hi) {
            const int n = static_cast<int>(std::floor((hi - lo) / s + 1e-9)) + 1;
            const double offset = lo + ((hi - lo) - (n - 1) * s) / 2;
            return std::make_pair(n, offset);
        };
        const auto [nu, u0] = axis(uLo, uHi);
        const auto [nv, v0] = axis(vLo, vHi);
        // A grid this large is not a seating plan (spacing is checked at load; this guards
        // against a huge floor group).
        if (static_cast<double>(nu) * nv > 1e6) {
            diag.Error(block.definedAt, "seating zone '" + block.zone + "' would need " +
                                            std::to_string(static_cast<long long>(nu) * nv) +
                                            " grid points; check spacing_m and the surfaces named");
            continue;
        }

        const Source* facingSource = &first;
        for (const auto& src : scene.sources)
            if (src.name == block.facing) facingSource = &src;

        int placed = 0, dropped = 0, row = 0;
        std::string firstDropped;
        for (int i = 0; i < nu; ++i) {
            int seat = 0;
            for (int j = 0; j < nv; ++j) {
                const Eigen::Vector2d q = (u0 + i * s) * depth + (v0 + j * s) * lateral;
                auto floor = FloorHeight(tris, q);
                if (!floor) continue;
                if (seat == 0) ++row;
                ++seat;
                Receiver r;
                r.name = block.zone + "-r" + TwoDigits(row) + "-s" + TwoDigits(seat);
                r.position = Vec3(q.x(), *floor + block.earHeightM, q.y());
                r.zone = block.zone;
                r.generated = true;
                r.definedAt = block.definedAt;
                if (block.facingDirection) {
                    r.facing = *block.facingDirection;
                } else {
                    const Vec3 toSource = facingSource->position - r.position;
                    r.facingSource = facingSource->name;
                    r.facing = toSource.norm() > 1e-9 ? Vec3(toSource.normalized()) : Vec3(depth.x(), 0, depth.y());
                }
                if (!PlacementProblem(geometry, r.position, nullptr).empty()) {
                    if (dropped++ == 0) firstDropped = r.name;
                    continue;
                }
                if (!names.insert(r.name).second) {
                    const Receiver* other = nullptr;
                    for (const auto& e : scene.receivers)
                        if (e.name == r.name) other = &e;
                    diag.Error(other ? other->definedAt : block.definedAt,
                               "receiver name '" + r.name + "' is also the name of a generated seat of zone '" +
                                   block.zone + "'; rename the receiver");
                    continue;
                }
                scene.receivers.push_back(std::move(r));
                ++placed;
            }
        }
        if (dropped > 0)
            diag.Warning(block.definedAt, std::to_string(dropped) + " of " + std::to_string(placed + dropped) +
                                              " generated seats of zone '" + block.zone +
                                              "' dropped: outside the room or within 0.1 m of a surface (first: " +
                                              firstDropped + "); check ear_height_m and the surfaces above the floor");
        if (placed == 0)
            diag.Error(block.definedAt, "seating zone '" + block.zone + "' produced no seats (" + std::to_string(dropped) +
                                            " dropped); check surfaces, spacing_m and ear_height_m");
    }
}

std::unique_ptr<Room> LoadRoom(const std::string& scenePath, Diagnostics& diag) {
    const int errorsBefore = diag.ErrorCount();
    auto scene = LoadScene(scenePath, diag);
    if (!scene) return nullptr;
    // The geometry points into room->scene.mesh, so it is built in place.
    auto room = std::make_unique<Room>();
    room->scene = std::move(*scene);
    auto geometry = Geometry::Build(room->scene, diag);
    if (!geometry || diag.ErrorCount() > errorsBefore) return nullptr;
    room->geometry = std::move(*geometry);
    PlaceReceivers(room->scene, room->geometry, diag);
    if (diag.ErrorCount() > errorsBefore) return nullptr;
    ChooseSpatialSeats(room->scene, diag);  // checks [output] spatial_seats names the seats
    if (diag.ErrorCount() > errorsBefore) return nullptr;
    return room;
}

}  // namespace hallwright
