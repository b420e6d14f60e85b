// Seat selection for decay curves and spatial IR files (spatial_seats.h).
#include "hallwright/spatial_seats.h"

#include <algorithm>
#include <limits>
#include <string>

#include "scene/text_util.h"

namespace hallwright {

namespace {

int NearestTo(const Scene& scene, const std::string& zone, const Vec3& p) {
    int best = -1;
    double bestD = std::numeric_limits<double>::infinity();
    for (int i = 0; i < static_cast<int>(scene.receivers.size()); ++i) {
        if (scene.receivers[i].zone != zone) continue;
        const double d = (scene.receivers[i].position - p).norm();
        if (d < bestD) best = i, bestD = d;
    }
    return best;
}

}  // namespace

std::vector<std::string> ZoneOrder(const Scene& scene) {
    std::vector<std::string> zones;
    for (const auto& r : scene.receivers)
        if (std::find(zones.begin(), zones.end(), r.zone) == zones.end()) zones.push_back(r.zone);
    return zones;
}

std::vector<int> SeatsNearZoneCentroids(const Scene& scene) {
    std::vector<int> chosen;
    for (const std::string& zone : ZoneOrder(scene)) {
        Vec3 centre = Vec3::Zero();
        int n = 0;
        for (const auto& r : scene.receivers)
            if (r.zone == zone) centre += r.position, ++n;
        chosen.push_back(NearestTo(scene, zone, centre / n));
    }
    return chosen;
}

std::vector<int> ChooseSpatialSeats(const Scene& scene, Diagnostics& diag) {
    std::vector<int> chosen;
    // Named seats first.
    std::vector<std::string> names;
    for (const auto& r : scene.receivers) names.push_back(r.name);
    for (size_t k = 0; k < scene.output.spatialSeats.size(); ++k) {
        const std::string& name = scene.output.spatialSeats[k];
        const auto it = std::find(names.begin(), names.end(), name);
        if (it == names.end()) {
            const SourceLoc at = k < scene.output.spatialSeatsAt.size() ? scene.output.spatialSeatsAt[k] : SourceLoc{};
            diag.Error(at, "spatial_seats in [output] names seat '" + name + "', which the scene does not have" +
                               text::DidYouMean(name, names) +
                               "; use a seat name from seats.csv or `hallwright inspect` (e.g. '" + names.front() +
                               "')");
            continue;
        }
        chosen.push_back(static_cast<int>(it - names.begin()));
    }
    // Then spatial_per_zone seats per zone.
    const int perZone = scene.output.spatialPerZone;
    const std::vector<int> centroidSeats = SeatsNearZoneCentroids(scene);
    const std::vector<std::string> zones = ZoneOrder(scene);
    for (size_t z = 0; z < zones.size() && perZone > 0; ++z) {
        std::vector<int> zoneSeats;
        for (int i = 0; i < static_cast<int>(scene.receivers.size()); ++i)
            if (scene.receivers[i].zone == zones[z]) zoneSeats.push_back(i);
        std::vector<int> picked = {centroidSeats[z]};
        // Second: the zone's back, farthest from the first source.
        if (perZone >= 2 && !scene.sources.empty()) {
            int far = -1;
            double farD = -1;
            for (int i : zoneSeats) {
                const double d = (scene.receivers[i].position - scene.sources[0].position).norm();
                if (i != picked[0] && d > farD) far = i, farD = d;
            }
            if (far >= 0) picked.push_back(far);
        }
        // Then farthest-point spreading over the zone.
        while (static_cast<int>(picked.size()) < std::min<int>(perZone, static_cast<int>(zoneSeats.size()))) {
            int best = -1;
            double bestD = -1;
            for (int i : zoneSeats) {
                double d = std::numeric_limits<double>::infinity();
                for (int j : picked) d = std::min(d, (scene.receivers[i].position - scene.receivers[j].position).norm());
                if (d > bestD) best = i, bestD = d;
            }
            picked.push_back(best);
        }
        chosen.insert(chosen.end(), picked.begin(), picked.end());
    }
    std::sort(chosen.begin(), chosen.end());
    chosen.erase(std::unique(chosen.begin(), chosen.end()), chosen.end());
    return chosen;
}

}  // namespace hallwright
