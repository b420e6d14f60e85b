// RayScene: the only file that includes Embree's API for the static room scene (see
// geometry.h). Robust scene flag (watertight Pluecker test along shared edges).
#include <embree3/rtcore.h>

#include <cmath>
#include <stdexcept>
#include <string>

#include "hallwright/geometry.h"

namespace hallwright {

struct RayScene::Impl {
    RTCDevice device = nullptr;
    RTCScene scene = nullptr;
};

namespace {
void EmbreeError(void*, RTCError code, const char* str) {
    // Embree errors are programming errors here (the mesh was validated before): surface them.
    throw std::runtime_error(std::string("Embree error ") + std::to_string(static_cast<int>(code)) + ": " +
                             (str ? str : ""));
}
}  // namespace

RayScene::RayScene(const Mesh& mesh) : impl_(std::make_unique<Impl>()) {
    impl_->device = rtcNewDevice(nullptr);
    if (!impl_->device)
        throw std::runtime_error("cannot create an Embree device (error " +
                                 std::to_string(static_cast<int>(rtcGetDeviceError(nullptr))) + ")");
    rtcSetDeviceErrorFunction(impl_->device, EmbreeError, nullptr);
    impl_->scene = rtcNewScene(impl_->device);
    rtcSetSceneFlags(impl_->scene, RTC_SCENE_FLAG_ROBUST);
    rtcSetSceneBuildQuality(impl_->scene, RTC_BUILD_QUALITY_HIGH);

    RTCGeometry geom = rtcNewGeometry(impl_->device, RTC_GEOMETRY_TYPE_TRIANGLE);
    auto* vb = static_cast<float*>(rtcSetNewGeometryBuffer(geom, RTC_BUFFER_TYPE_VERTEX, 0, RTC_FORMAT_FLOAT3,
                                                           3 * sizeof(float), mesh.vertices.size()));
    for (size_t i = 0; i < mesh.vertices.size(); ++i)
        for (int k = 0; k < 3; ++k) vb[3 * i + k] = static_cast<float>(mesh.vertices[i][k]);
    auto* ib = static_cast<unsigned*>(rtcSetNewGeometryBuffer(geom, RTC_BUFFER_TYPE_INDEX, 0, RTC_FORMAT_UINT3,
                                                              3 * sizeof(unsigned), mesh.triangles.size()));
    for (size_t t = 0; t < mesh.triangles.size(); ++t)
        for (int k = 0; k < 3; ++k) ib[3 * t + k] = mesh.triangles[t][k];
    rtcCommitGeometry(geom);
    rtcAttachGeometryByID(impl_->scene, geom, 0);
    rtcReleaseGeometry(geom);
    rtcCommitScene(impl_->scene);
}

RayScene::~RayScene() {
    if (!impl_) return;
    if (impl_->scene) rtcReleaseScene(impl_->scene);
    if (impl_->device) rtcReleaseDevice(impl_->device);
}

RayScene::RayScene(RayScene&&) noexcept = default;
RayScene& RayScene::operator=(RayScene&&) noexcept = default;

std::optional<RayHit> RayScene::Intersect(const Vec3& origin, const Vec3& dir, double tNear, double tFar) const {
    RTCIntersectContext ctx;
    rtcInitIntersectContext(&ctx);
    alignas(16) RTCRayHit rh;
    rh.ray.org_x = static_cast<float>(origin.x());
    rh.ray.org_y = static_cast<float>(origin.y());
    rh.ray.org_z = static_cast<float>(origin.z());
    rh.ray.dir_x = static_cast<float>(dir.x());
    rh.ray.dir_y = static_cast<float>(dir.y());
    rh.ray.dir_z = static_cast<float>(dir.z());
    rh.ray.tnear = static_cast<float>(tNear);
    rh.ray.tfar = tFar > 3e38 ? INFINITY : static_cast<float>(tFar);
    rh.ray.time = 0;
    rh.ray.mask = 0xFFFFFFFFu;
    rh.ray.id = 0;
    rh.ray.flags = 0;
    rh.hit.geomID = RTC_INVALID_GEOMETRY_ID;
    rh.hit.instID[0] = RTC_INVALID_GEOMETRY_ID;
    rtcIntersect1(impl_->scene, &ctx, &rh);
    if (rh.hit.geomID == RTC_INVALID_GEOMETRY_ID) return std::nullopt;
    RayHit hit;
    hit.t = rh.ray.tfar;
    hit.triangle = rh.hit.primID;
    Vec3 n(rh.hit.Ng_x, rh.hit.Ng_y, rh.hit.Ng_z);
    n.normalize();
    if (n.dot(dir) > 0) n = -n;
    hit.normal = n;
    return hit;
}

bool RayScene::Occluded(const Vec3& a, const Vec3& b, double eps) const {
    const Vec3 d = b - a;
    const double len = d.norm();
    if (len <= 2 * eps) return false;
    RTCIntersectContext ctx;
    rtcInitIntersectContext(&ctx);
    alignas(16) RTCRay ray;
    ray.org_x = static_cast<float>(a.x());
    ray.org_y = static_cast<float>(a.y());
    ray.org_z = static_cast<float>(a.z());
    ray.dir_x = static_cast<float>(d.x() / len);
    ray.dir_y = static_cast<float>(d.y() / len);
    ray.dir_z = static_cast<float>(d.z() / len);
    ray.tnear = static_cast<float>(eps);
    ray.tfar = static_cast<float>(len - eps);
    ray.time = 0;
    ray.mask = 0xFFFFFFFFu;
    ray.id = 0;
    ray.flags = 0;
    rtcOccluded1(impl_->scene, &ctx, &ray);
    return ray.tfar == -INFINITY;
}

void* RayScene::NativeScene() const { return impl_->scene; }
void* RayScene::NativeDevice() const { return impl_->device; }

}  // namespace hallwright
