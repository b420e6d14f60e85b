// `hallwright inspect SCENE.toml [--json]`: the room summary a consultant checks first.
#include <cmath>
#include <cstdio>
#include <map>

#include <nlohmann/json.hpp>

#include "command.h"
#include "hallwright/room.h"
#include "hallwright/room_acoustics.h"

namespace {

using hallwright::kBandCount;
using hallwright::kNominalBandHz;

nlohmann::ordered_json SummaryJson(const hallwright::Room& room, const hallwright::RoomEstimates& e,
                                   const hallwright::Diagnostics& diag) {
    const auto& scene = room.scene;
    const auto& geo = room.geometry;
    nlohmann::ordered_json j;
    j["title"] = scene.title;
    j["scene"] = scene.scenePath;
    j["mesh"] = scene.meshPath;
    j["volume_m3"] = e.volumeM3;
    j["surface_area_m2"] = e.surfaceAreaM2;
    j["mean_free_path_m"] = e.meanFreePathM;
    j["closed"] = geo.IsClosed();
    j["open_edges"] = geo.OpenEdges().size();
    j["triangles"] = scene.mesh.TriangleCount();
    j["faces"] = geo.Faces().size();
    j["sources"] = scene.sources.size();
    j["seats"] = scene.receivers.size();
    std::map<std::string, int> perZone;
    for (const auto& r : scene.receivers) perZone[r.zone.empty() ? "(none)" : r.zone]++;
    j["seats_per_zone"] = perZone;
    auto& mats = j["materials"] = nlohmann::ordered_json::array();
    for (size_t m = 0; m < scene.materials.size(); ++m) {
        mats.push_back({{"material", scene.materials[m].name},
                        {"area_m2", geo.AreaPerMaterial()[m]},
                        {"absorption_area_1k_m2", geo.AreaPerMaterial()[m] * scene.materials[m].absorption[4]}});
    }
    auto& bands = j["bands"] = nlohmann::ordered_json::array();
    for (int b = 0; b < kBandCount; ++b) {
        bands.push_back({{"band_hz", kNominalBandHz[b]},
                         {"mean_absorption", e.meanAbsorption[b]},
                         {"air_m_per_m", e.airM[b]},
                         {"sabine_s", e.sabineS[b]},
                         {"eyring_s", e.eyringS[b]},
                         {"schroeder_hz", e.schroederHz[b]}});
    }
    auto& warnings = j["warnings"] = nlohmann::ordered_json::array();
    for (const auto& d : diag.Items()) warnings.push_back(hallwright::FormatDiagnostic(d));
    return j;
}

void PrintSummary(const hallwright::Room& room, const hallwright::RoomEstimates& e) {
    const auto& scene = room.scene;
    const auto& geo = room.geometry;
    std::printf("%s\n", scene.title.empty() ? scene.scenePath.c_str() : scene.title.c_str());
    std::printf("  model      %s (%zu triangles, %zu planar faces, %s)\n", scene.meshPath.c_str(),
                scene.mesh.TriangleCount(), geo.Faces().size(),
                geo.IsClosed() ? "closed" : "OPEN: see warnings");
    std::printf("  volume     %.1f m3\n  surface    %.1f m2\n  mean free path 4V/S  %.2f m\n", e.volumeM3,
                e.surfaceAreaM2, e.meanFreePathM);
    std::printf("  sources    %zu\n  seats      %zu", scene.sources.size(), scene.receivers.size());
    std::map<std::string, int> perZone;
    for (const auto& r : scene.receivers) perZone[r.zone.empty() ? "(none)" : r.zone]++;
    const char* sep = " (";
    for (const auto& [zone, n] : perZone) {
        std::printf("%s%s %d", sep, zone.c_str(), n);
        sep = ", ";
    }
    std::printf("%s\n\n", perZone.empty() ? "" : ")");
    std::printf("  %-28s %10s %8s\n", "material", "area m2", "a(1k)");
    for (size_t m = 0; m < scene.materials.size(); ++m)
        std::printf("  %-28s %10.1f %8.2f\n", scene.materials[m].name.c_str(), geo.AreaPerMaterial()[m],
                    scene.materials[m].absorption[4]);
    std::printf("\n  %-8s %8s %10s %10s %10s %12s\n", "band Hz", "mean a", "air 1/km", "Sabine s", "Eyring s",
                "Schroeder Hz");
    for (int b = 0; b < kBandCount; ++b)
        std::printf("  %-8d %8.3f %10.3f %10.2f %10.2f %12.0f\n", kNominalBandHz[b], e.meanAbsorption[b],
                    e.airM[b] * 1000.0, e.sabineS[b], e.eyringS[b], e.schroederHz[b]);
    std::printf("\n  Below the Schroeder frequency the room's modes dominate and geometric results are unreliable.\n");
    std::printf("  Sabine/Eyring assume a diffuse field; they are a first check, not the prediction.\n");
}

const bool kRegistered = hwcli::AddCommand(
    "inspect",
    "Check a scene and print the room summary (volume, areas, Sabine/Eyring T, seats)\n"
    "Example: hallwright inspect scenes/theatre/scene.toml --json",
    [](CLI::App* sub) {
        auto scenePath = std::make_shared<std::string>();
        auto json = std::make_shared<bool>(false);
        sub->add_option("scene", *scenePath, "scene file (TOML)")->required();
        sub->add_flag("--json", *json, "print only a JSON object on stdout (warnings still go to stderr)");
        return [=] {
            hallwright::Diagnostics diag;
            auto room = hallwright::LoadRoom(*scenePath, diag);
            hwcli::Report(diag);
            if (!room) return hwcli::kExitBadInput;
            const auto e = hallwright::EstimateRoom(room->scene, room->geometry);
            if (*json)
                std::printf("%s\n", SummaryJson(*room, e, diag).dump(2).c_str());
            else
                PrintSummary(*room, e);
            return hwcli::kExitOk;
        };
    });

}  // namespace
