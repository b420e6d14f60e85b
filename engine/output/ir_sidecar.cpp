// Reader of IR sidecars (ir_sidecar.h).
#include "hallwright/ir_sidecar.h"

#include <cmath>
#include <filesystem>
#include <fstream>
#include <sstream>

#include <nlohmann/json.hpp>

#include "hallwright/mesh.h"

namespace hallwright {

namespace {

std::optional<Vec3> ReadVec(const nlohmann::json& j) {
    if (!j.is_array() || j.size() != 3) return std::nullopt;
    for (const auto& v : j)
        if (!v.is_number()) return std::nullopt;
    Vec3 out(j[0].get<double>(), j[1].get<double>(), j[2].get<double>());
    if (!out.allFinite()) return std::nullopt;
    return out;
}

}  // namespace

std::optional<IrSidecar> ParseIrSidecar(const std::string& text, const std::string& path, Diagnostics& diag) {
    const SourceLoc at{path, 0, 0, ""};
    nlohmann::json j;
    try {
        j = nlohmann::json::parse(text);
    } catch (const nlohmann::json::parse_error& e) {
        diag.Error(at, std::string("not valid JSON: ") + e.what() + " (fix or delete the sidecar)");
        return std::nullopt;
    }
    if (!j.is_object()) {
        diag.Error(at, "the sidecar must be a JSON object");
        return std::nullopt;
    }
    IrSidecar s;
    s.path = path;
    if (j.contains("reference_energy")) {
        const auto& r = j["reference_energy"];
        if (!r.is_number() || !(r.get<double>() > 0) || !std::isfinite(r.get<double>())) {
            diag.Error(at, "\"reference_energy\" must be a positive number");
            return std::nullopt;
        }
        s.referenceEnergy = r.get<double>();
    }
    if (j.contains("channel_layout")) {
        const std::string l = j["channel_layout"].is_string() ? j["channel_layout"].get<std::string>() : "";
        if (l == "mono") s.layout = ChannelLayout::kMono;
        else if (l.rfind("ambix", 0) == 0) s.layout = ChannelLayout::kAmbix;
        else if (l.rfind("binaural", 0) == 0) s.layout = ChannelLayout::kBinaural;
        else {
            diag.Error(at, "\"channel_layout\" \"" + l + "\" is not mono, ambix-acn-sn3d or binaural-lr");
            return std::nullopt;
        }
    }
    auto name = [&](const char* key, std::string& out, std::string* zone) {
        if (!j.contains(key)) return;
        const auto& o = j[key];
        if (o.is_string()) out = o.get<std::string>();
        if (o.is_object() && o.contains("name") && o["name"].is_string()) out = o["name"].get<std::string>();
        if (zone && o.is_object() && o.contains("zone") && o["zone"].is_string()) *zone = o["zone"].get<std::string>();
    };
    name("source", s.sourceName, nullptr);
    name("seat", s.seatName, &s.zone);
    // Source azimuth in the listener's horizontal plane, about "up"; sidecars written before
    // that key existed (and hand-made ones) leave the up axis to a guess below.
    std::optional<Vec3> up;
    if (j.contains("up")) {
        up = ReadVec(j["up"]);
        if (!up || !(up->norm() > 0)) {
            diag.Error(at, "\"up\" must be a non-zero vector [x, y, z] (or leave the key out)");
            return std::nullopt;
        }
    }
    std::optional<Vec3> dir = j.contains("source_direction") ? ReadVec(j["source_direction"]) : std::nullopt;
    std::optional<Vec3> facing;
    if (j.contains("seat") && j["seat"].is_object() && j["seat"].contains("facing")) facing = ReadVec(j["seat"]["facing"]);
    if (dir && facing && dir->norm() > 0 && facing->norm() > 0) {
        if (!up) {
            const double y = std::fabs(dir->normalized().y()) + std::fabs(facing->normalized().y());
            const double z = std::fabs(dir->normalized().z()) + std::fabs(facing->normalized().z());
            up = z < y ? Vec3(0, 0, 1) : Vec3(0, 1, 0);
            s.azimuthNote = std::string("up axis taken as +") + (z < y ? "z" : "y") + " (no \"up\" key)";
        }
        const Vec3 u = up->normalized();
        Vec3 f = *facing - facing->dot(u) * u, d = *dir - dir->dot(u) * u;
        if (f.norm() > 1e-9 && d.norm() > 1e-9) {
            f.normalize();
            d.normalize();
            const Vec3 left = u.cross(f);  // counter-clockwise seen from above
            s.sourceAzimuthDeg = std::atan2(d.dot(left), d.dot(f)) * 180.0 / M_PI;
        }
    }
    return s;
}

std::optional<IrSidecar> ReadIrSidecar(const std::string& wavPath, Diagnostics& diag) {
    const std::string path = wavPath + ".json";
    std::error_code ec;
    if (!std::filesystem::exists(path, ec)) return std::nullopt;
    std::ifstream in(path, std::ios::binary);
    if (!in) {
        diag.Error({path, 0, 0, ""}, "cannot read the sidecar");
        return std::nullopt;
    }
    std::stringstream ss;
    ss << in.rdbuf();
    return ParseIrSidecar(ss.str(), path, diag);
}

}  // namespace hallwright
