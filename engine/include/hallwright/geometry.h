#pragma once
// Room geometry: planar faces (coplanar adjacent triangles of one material merged), room
// volume and areas, and the Embree 3 scene used for every ray query.
#include <cstdint>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "hallwright/diagnostics.h"
#include "hallwright/scene.h"

namespace hallwright {

/* A planar face: a connected set of coplanar triangles of one material and group. */
struct Face {
    Vec3 normal;                      // unit normal; after orientation it points into the room
    double offset = 0;                // plane: normal . x = offset
    std::vector<uint32_t> triangles;  // indices into Mesh::triangles
    int material = 0;                 // index into Scene::materials
    int group = 0;                    // index into Mesh::groupNames
    double area = 0;                  // m^2
    Vec3 centroid = Vec3::Zero();     // area-weighted
    double SignedDistance(const Vec3& p) const { return normal.dot(p) - offset; }
};

/* Result of a closest-hit query. */
struct RayHit {
    double t = 0;          // distance along the (unit) direction, metres
    uint32_t triangle = 0; // index into Mesh::triangles
    Vec3 normal;           // unit geometric normal, flipped to face the incoming ray
};

/* RAII wrapper around an Embree 3 device and scene (robust flag); thread-safe queries. */
class RayScene {
  public:
    explicit RayScene(const Mesh& mesh);
    ~RayScene();
    RayScene(const RayScene&) = delete;
    RayScene& operator=(const RayScene&) = delete;
    RayScene(RayScene&&) noexcept;
    RayScene& operator=(RayScene&&) noexcept;

    /* Closest hit along unit direction `dir` from `origin` within (tNear, tFar). */
    std::optional<RayHit> Intersect(const Vec3& origin, const Vec3& dir, double tNear = 0,
                                    double tFar = 1e30) const;
    /* True when the open segment a->b is blocked (ends shrunk by `eps` metres). */
    bool Occluded(const Vec3& a, const Vec3& b, double eps = 1e-6) const;
    /* The Embree RTCScene handle, for stages that issue their own queries (tracer). */
    void* NativeScene() const;
    void* NativeDevice() const;

  private:
    struct Impl;
    std::unique_ptr<Impl> impl_;
};

struct OpenEdge {
    Vec3 a, b;         // end points (internal frame)
    int objLine = 0;   // an OBJ face line that uses the edge
};

/* Topology ids of the mesh vertices: positions equal within 10 um share one id (the lowest
   index), so surfaces that touch are adjacent even when the OBJ repeats vertices. The one
   welding rule used by face merging, image sources and the design review. */
std::vector<uint32_t> WeldedVertexIds(const Mesh& mesh);

class Geometry {
  public:
    /* Validates and merges the mesh; fixes winding (warns) so normals point into the room. */
    static std::optional<Geometry> Build(Scene& scene, Diagnostics& diag);

    const std::vector<Face>& Faces() const { return faces_; }
    const std::vector<int>& TriangleFace() const { return triangleFace_; }
    const Mesh& GetMesh() const { return *mesh_; }
    const RayScene& Rays() const { return *rays_; }

    double Volume() const { return volume_; }                 // m^3, positive for a closed room
    double SurfaceArea() const { return surfaceArea_; }       // m^2
    const std::vector<double>& AreaPerMaterial() const { return areaPerMaterial_; }
    const std::vector<double>& AreaPerGroup() const { return areaPerGroup_; }
    const std::vector<OpenEdge>& OpenEdges() const { return openEdges_; }
    bool IsClosed() const { return openEdges_.empty(); }
    Vec3 BoundsMin() const { return boundsMin_; }
    Vec3 BoundsMax() const { return boundsMax_; }

    /* True if p is inside the closed room (ray parity test with several directions). */
    bool Contains(const Vec3& p) const;
    /* Distance from p to the nearest surface (metres). */
    double DistanceToSurface(const Vec3& p) const;

  private:
    const Mesh* mesh_ = nullptr;
    std::vector<Face> faces_;
    std::vector<int> triangleFace_;
    std::unique_ptr<RayScene> rays_;
    double volume_ = 0, surfaceArea_ = 0;
    std::vector<double> areaPerMaterial_, areaPerGroup_;
    std::vector<OpenEdge> openEdges_;
    Vec3 boundsMin_ = Vec3::Zero(), boundsMax_ = Vec3::Zero();
};

}  // namespace hallwright
