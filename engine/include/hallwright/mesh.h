#pragma once
// The architect's model after loading: triangles in metres, in the internal y-up frame.
#include <array>
#include <cstdint>
#include <string>
#include <vector>

#include <Eigen/Core>
#include <Eigen/Geometry>

namespace hallwright {

using Vec3 = Eigen::Vector3d;

struct Mesh {
    std::vector<Vec3> vertices;                        // metres, internal frame (y up)
    std::vector<std::array<uint32_t, 3>> triangles;    // indices into vertices
    std::vector<int> triangleMaterial;                 // index into Scene::materials
    std::vector<int> triangleGroup;                    // index into groupNames
    std::vector<int> triangleLine;                     // OBJ line of the face it came from
    std::vector<std::string> groupNames;               // OBJ `g`/`o` names ("(default)" if none)

    size_t TriangleCount() const { return triangles.size(); }
    Vec3 Vertex(size_t tri, int corner) const { return vertices[triangles[tri][corner]]; }
    /* Unnormalised normal (p1 - p0) x (p2 - p0); its length is twice the area. */
    Vec3 TriangleCross(size_t tri) const {
        return (Vertex(tri, 1) - Vertex(tri, 0)).cross(Vertex(tri, 2) - Vertex(tri, 0));
    }
    double TriangleArea(size_t tri) const { return 0.5 * TriangleCross(tri).norm(); }
};

}  // namespace hallwright
