#pragma once
// Helpers for the design-review tests: load a scene, optionally move, mirror or regroup the
// model before the geometry is built, and pick findings by rule.
#include <cmath>
#include <functional>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include <gtest/gtest.h>

#include "hallwright/review.h"
#include "hallwright/room.h"
#include "hallwright/scene.h"
#include "test_support.h"

namespace hallwright::test {

/* A scene and its geometry (the geometry refers to scene.mesh, so this is never moved). */
struct BuiltRoom {
    Scene scene;
    std::optional<Geometry> geometry;
};

/* Rotation about the vertical (internal y) axis by `deg` degrees. */
inline Vec3 RotateY(const Vec3& p, double deg) {
    const double a = deg * M_PI / 180.0, c = std::cos(a), s = std::sin(a);
    return Vec3(c * p.x() + s * p.z(), p.y(), -s * p.x() + c * p.z());
}

/* Mirror image in the plane x = 0. */
inline Vec3 MirrorX(const Vec3& p) { return Vec3(-p.x(), p.y(), p.z()); }

/* Loads scene `relative` (from the source tree), applies `move` to the model, the sources and
   the explicit receivers, calls `edit` on the scene (e.g. to regroup), then builds the geometry
   and places the seats. */
inline std::unique_ptr<BuiltRoom> LoadMoved(const std::string& relative,
                                            const std::function<Vec3(const Vec3&)>& move = nullptr,
                                            const std::function<void(Scene&)>& edit = nullptr) {
    Diagnostics diag;
    auto scene = LoadScene(SourcePath(relative), diag);
    EXPECT_TRUE(scene.has_value()) << diag.ToString();
    if (!scene) return nullptr;
    auto out = std::make_unique<BuiltRoom>();
    out->scene = std::move(*scene);
    Scene& s = out->scene;
    if (move) {
        const Vec3 o = move(Vec3::Zero());
        for (Vec3& v : s.mesh.vertices) v = move(v);
        for (Source& src : s.sources) src.position = move(src.position);
        for (Receiver& r : s.receivers) {
            r.position = move(r.position);
            r.facing = (move(r.facing) - o).normalized();
        }
        for (SeatingBlock& b : s.seating)
            if (b.facingDirection) b.facingDirection = (move(*b.facingDirection) - o).normalized();
    }
    if (edit) edit(s);
    out->geometry = Geometry::Build(s, diag);
    EXPECT_TRUE(out->geometry.has_value()) << diag.ToString();
    if (!out->geometry) return nullptr;
    PlaceReceivers(s, *out->geometry, diag);
    EXPECT_FALSE(diag.HasErrors()) << diag.ToString();
    return out;
}

/* Findings of one rule. */
inline std::vector<Finding> OfRule(const std::vector<Finding>& all, const std::string& rule) {
    std::vector<Finding> out;
    for (const Finding& f : all)
        if (f.rule == rule) out.push_back(f);
    return out;
}

/* Findings of one rule with the given severity. */
inline std::vector<Finding> OfSeverity(const std::vector<Finding>& all, const std::string& severity) {
    std::vector<Finding> out;
    for (const Finding& f : all)
        if (f.severity == severity) out.push_back(f);
    return out;
}

}  // namespace hallwright::test
