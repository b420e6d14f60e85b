// Model frame <-> internal frame. Internal: metres, y up. A z-up model is rotated by
// (x, y, z) -> (x, z, -y): a proper rotation (determinant +1), so left stays left.
#include <stdexcept>

#include "hallwright/scene.h"

namespace hallwright {

namespace {
double UnitScale(const std::string& units) {
    if (units == "m") return 1.0;
    if (units == "cm") return 0.01;
    if (units == "mm") return 0.001;
    if (units == "in") return 0.0254;
    if (units == "ft") return 0.3048;
    throw std::invalid_argument("unknown model units \"" + units + "\"");
}
}  // namespace

double ModelUnitScale(const std::string& units) { return UnitScale(units); }

Vec3 Scene::DirectionFromModel(const Vec3& d) const {
    if (modelUp == "z") return Vec3(d.x(), d.z(), -d.y());
    return d;
}

Vec3 Scene::DirectionToModel(const Vec3& d) const {
    if (modelUp == "z") return Vec3(d.x(), -d.z(), d.y());
    return d;
}

Vec3 Scene::FromModel(const Vec3& p) const { return DirectionFromModel(p) * UnitScale(modelUnits); }

Vec3 Scene::ToModel(const Vec3& p) const { return DirectionToModel(p) / UnitScale(modelUnits); }

}  // namespace hallwright
