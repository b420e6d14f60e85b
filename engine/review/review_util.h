#pragma once
// Helpers shared by the design-review rules (private to engine/review).
#include <array>
#include <string>
#include <vector>

#include "hallwright/geometry.h"
#include "hallwright/review.h"
#include "hallwright/scene.h"

namespace hallwright::review {

using Vec2 = Eigen::Vector2d;

using hallwright::WeldedVertexIds;  // geometry.h: the one welding rule

/* Sorted welded vertex ids of every face. */
std::vector<std::vector<uint32_t>> FaceVertexIds(const Geometry& geometry, const std::vector<uint32_t>& weld);

/* Number of welded vertex ids two sorted lists share. */
int SharedCount(const std::vector<uint32_t>& a, const std::vector<uint32_t>& b);

/* OBJ group name of a face. */
std::string GroupName(const Scene& scene, const Geometry& geometry, int face);

/* Unique group names of several faces, sorted. */
std::vector<std::string> GroupNames(const Scene& scene, const Geometry& geometry, const std::vector<int>& faces);

/* A point in model units and axes, as [x, y, z]. */
std::vector<double> ModelPoint(const Scene& scene, const Vec3& p);

/* Two unit vectors completing `axis` to an orthonormal basis. */
void Basis(const Vec3& axis, Vec3& e1, Vec3& e2);

/* Area and area-weighted centroid of the intersection of two 2-D triangles (any winding). */
double TriangleOverlap(const std::array<Vec2, 3>& a, const std::array<Vec2, 3>& b, Vec2* centroid);

/* True if p lies inside (or on) the 2-D triangle. */
bool InTriangle(const Vec2& p, const std::array<Vec2, 3>& t);

/* Mean of a band array over the 1, 2 and 4 kHz octaves. */
double Mean1To4k(const Bands& b);

/* Faces of each concave patch, in the order ReviewFocusing reports them (focusing.cpp). */
std::vector<std::vector<int>> ConcavePatchFaces(const Geometry& geometry);

/* Formats a number with `digits` decimals. */
std::string Fixed(double v, int digits);

}  // namespace hallwright::review
