// Design review: shared helpers, options, the combined review and review.json.
#include "hallwright/review.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <limits>
#include <map>

#include <nlohmann/json.hpp>

#include "review/review_util.h"

namespace hallwright {

namespace review {

std::vector<std::vector<uint32_t>> FaceVertexIds(const Geometry& geometry, const std::vector<uint32_t>& weld) {
    const Mesh& mesh = geometry.GetMesh();
    std::vector<std::vector<uint32_t>> out(geometry.Faces().size());
    for (size_t f = 0; f < geometry.Faces().size(); ++f) {
        for (uint32_t t : geometry.Faces()[f].triangles)
            for (int k = 0; k < 3; ++k) out[f].push_back(weld[mesh.triangles[t][k]]);
        std::sort(out[f].begin(), out[f].end());
        out[f].erase(std::unique(out[f].begin(), out[f].end()), out[f].end());
    }
    return out;
}

int SharedCount(const std::vector<uint32_t>& a, const std::vector<uint32_t>& b) {
    int n = 0;
    size_t i = 0, j = 0;
    while (i < a.size() && j < b.size()) {
        if (a[i] < b[j]) ++i;
        else if (b[j] < a[i]) ++j;
        else { ++n; ++i; ++j; }
    }
    return n;
}

std::string GroupName(const Scene& scene, const Geometry& geometry, int face) {
    const int g = geometry.Faces()[face].group;
    if (g >= 0 && g < static_cast<int>(scene.mesh.groupNames.size())) return scene.mesh.groupNames[g];
    return "face " + std::to_string(face);
}

std::vector<std::string> GroupNames(const Scene& scene, const Geometry& geometry, const std::vector<int>& faces) {
    std::vector<std::string> out;
    for (int f : faces) out.push_back(GroupName(scene, geometry, f));
    std::sort(out.begin(), out.end());
    out.erase(std::unique(out.begin(), out.end()), out.end());
    return out;
}

std::vector<double> ModelPoint(const Scene& scene, const Vec3& p) {
    const Vec3 m = scene.ToModel(p);
    return {m.x(), m.y(), m.z()};
}

void Basis(const Vec3& axis, Vec3& e1, Vec3& e2) {
    const Vec3 helper = std::abs(axis.x()) < 0.6 ? Vec3(1, 0, 0) : Vec3(0, 1, 0);
    e1 = axis.cross(helper).normalized();
    e2 = axis.cross(e1);
}

namespace {
double Cross2(const Vec2& o, const Vec2& a, const Vec2& b) {
    return (a.x() - o.x()) * (b.y() - o.y()) - (a.y() - o.y()) * (b.x() - o.x());
}
}  // namespace

double TriangleOverlap(const std::array<Vec2, 3>& a, const std::array<Vec2, 3>& b, Vec2* centroid) {
    // Sutherland-Hodgman: clip triangle a by the three half-planes of b (both made ccw).
    std::vector<Vec2> poly(a.begin(), a.end());
    if (Cross2(poly[0], poly[1], poly[2]) < 0) std::swap(poly[1], poly[2]);
    std::array<Vec2, 3> clip = b;
    if (Cross2(clip[0], clip[1], clip[2]) < 0) std::swap(clip[1], clip[2]);
    for (int e = 0; e < 3 && !poly.empty(); ++e) {
        const Vec2 p0 = clip[e], p1 = clip[(e + 1) % 3];
        std::vector<Vec2> out;
        for (size_t i = 0; i < poly.size(); ++i) {
            const Vec2& cur = poly[i];
            const Vec2& nxt = poly[(i + 1) % poly.size()];
            const double dc = Cross2(p0, p1, cur), dn = Cross2(p0, p1, nxt);
            if (dc >= 0) out.push_back(cur);
            if ((dc >= 0) != (dn >= 0)) out.push_back(cur + (nxt - cur) * (dc / (dc - dn)));
        }
        poly = std::move(out);
    }
    if (poly.size() < 3) return 0;
    double area2 = 0;
    Vec2 c = Vec2::Zero();
    for (size_t i = 0; i < poly.size(); ++i) {
        const Vec2& p = poly[i];
        const Vec2& q = poly[(i + 1) % poly.size()];
        const double cr = p.x() * q.y() - q.x() * p.y();
        area2 += cr;
        c += (p + q) * cr;
    }
    if (area2 <= 1e-15) return 0;
    if (centroid) *centroid = c / (3.0 * area2);
    return 0.5 * area2;
}

bool InTriangle(const Vec2& p, const std::array<Vec2, 3>& t) {
    const double d0 = Cross2(t[0], t[1], p), d1 = Cross2(t[1], t[2], p), d2 = Cross2(t[2], t[0], p);
    const bool neg = d0 < 0 || d1 < 0 || d2 < 0, pos = d0 > 0 || d1 > 0 || d2 > 0;
    return !(neg && pos);
}

double Mean1To4k(const Bands& b) { return (b[4] + b[5] + b[6]) / 3.0; }

std::string Fixed(double v, int digits) {
    char buf[64];
    std::snprintf(buf, sizeof buf, "%.*f", digits, v);
    return buf;
}

}  // namespace review

const FindingValue* Finding::Value(const std::string& key) const {
    for (const auto& [k, v] : values)
        if (k == key) return &v;
    return nullptr;
}

double Finding::Number(const std::string& key) const {
    const FindingValue* v = Value(key);
    if (v && std::holds_alternative<double>(*v)) return std::get<double>(*v);
    return std::numeric_limits<double>::quiet_NaN();
}

std::vector<double> Finding::List(const std::string& key) const {
    const FindingValue* v = Value(key);
    if (v && std::holds_alternative<std::vector<double>>(*v)) return std::get<std::vector<double>>(*v);
    return {};
}

std::vector<std::string> Finding::Names(const std::string& key) const {
    const FindingValue* v = Value(key);
    if (v && std::holds_alternative<std::vector<std::string>>(*v)) return std::get<std::vector<std::string>>(*v);
    return {};
}

ReviewOptions ReviewOptionsFrom(const Scene& scene) {
    ReviewOptions o;
    o.venue = scene.review.venue == "theatre" ? Venue::kTheatre : Venue::kConcert;
    o.flutterMaxAngleDeg = scene.review.flutterMaxAngleDeg;
    return o;
}

double LimpMassTransmission(double frequencyHz, double surfaceDensityKgM2, double rho, double c) {
    // REFERENCES Part A section 6: tau = 1 / (1 + (pi f m'' / (rho0 c))^2), normal incidence.
    const double x = M_PI * frequencyHz * surfaceDensityKgM2 / (rho * c);
    return 1.0 / (1.0 + x * x);
}

double PanelResonanceHz(double surfaceDensityKgM2, double cavityM, double rho, double c) {
    // REFERENCES Part A section 5: f0 = (c / 2 pi) sqrt(rho0 / (m'' D)) ~ 60 / sqrt(m'' D).
    return c / (2.0 * M_PI) * std::sqrt(rho / (surfaceDensityKgM2 * cavityM));
}

double AirDensity(const AirConditions& air) {
    // Ideal gas, dry air: rho = p / (R T), R = 287.05 J/(kg K) (1.204 kg/m^3 at 20 C).
    return air.pressureKPa * 1000.0 / (287.05 * (air.temperatureC + 273.15));
}

std::vector<Finding> ReviewRoom(const Scene& scene, const Geometry& geometry, const ReviewOptions& options,
                                const std::vector<ReceiverPaths>* paths,
                                const std::vector<ReceiverHistogram>* diffuse) {
    std::vector<Finding> all;
    auto append = [&all](std::vector<Finding> part) {
        for (Finding& f : part) all.push_back(std::move(f));
    };
    append(ReviewFlutter(scene, geometry, options));
    if (paths) append(ReviewEchoes(scene, geometry, *paths, options, diffuse));
    append(ReviewFocusing(scene, geometry, options));
    append(ReviewOverhangs(scene, geometry, options));
    append(ReviewFacings(scene));
    return all;
}

std::string FindingsToJson(const std::vector<Finding>& findings) {
    using nlohmann::ordered_json;
    auto number = [](double v) -> ordered_json {
        if (!std::isfinite(v)) return nullptr;  // JSON has no NaN: "not applicable"
        return v;
    };
    ordered_json list = ordered_json::array();
    for (const Finding& f : findings) {
        ordered_json values = ordered_json::object();
        for (const auto& [key, value] : f.values) {
            if (std::holds_alternative<double>(value)) values[key] = number(std::get<double>(value));
            else if (std::holds_alternative<std::string>(value)) values[key] = std::get<std::string>(value);
            else if (std::holds_alternative<std::vector<std::string>>(value))
                values[key] = std::get<std::vector<std::string>>(value);
            else {
                ordered_json arr = ordered_json::array();
                for (double v : std::get<std::vector<double>>(value)) arr.push_back(number(v));
                values[key] = arr;
            }
        }
        ordered_json j;
        j["rule"] = f.rule;
        j["severity"] = f.severity;
        j["summary"] = f.summary;
        j["surfaces"] = f.surfaces;
        j["seats"] = f.seats;
        j["values"] = values;
        j["remedies"] = f.remedies;
        list.push_back(j);
    }
    ordered_json root;
    root["findings"] = list;
    return root.dump(2) + "\n";
}

}  // namespace hallwright
