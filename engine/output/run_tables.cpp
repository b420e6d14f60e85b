#include "hallwright/run_tables.h"

#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <map>
#include <set>

#include "hallwright/spatial_seats.h"
#include "hallwright/zones.h"

namespace hallwright {

std::string FormatNumber(double v, int significantDigits) {
    if (!std::isfinite(v)) return "";
    char buf[64];
    std::snprintf(buf, sizeof buf, "%.*g", significantDigits, v);
    return buf;
}

bool WriteTextFileAtomic(const std::string& path, const std::string& text, Diagnostics& diag) {
    namespace fs = std::filesystem;
    const std::string tmp = path + ".partial";
    {
        std::ofstream out(tmp, std::ios::binary | std::ios::trunc);
        if (!out) {
            diag.Error(SourceLoc{path, 0, 0, ""}, "cannot create the file — check that the directory is writable");
            return false;
        }
        out << text;
        out.flush();
        if (!out) {
            diag.Error(SourceLoc{path, 0, 0, ""}, "writing failed (disk full?)");
            std::error_code ec;
            fs::remove(tmp, ec);
            return false;
        }
    }
    std::error_code ec;
    fs::rename(tmp, path, ec);
    if (ec) {
        diag.Error(SourceLoc{path, 0, 0, ""}, "cannot rename the finished file into place: " + ec.message());
        fs::remove(tmp, ec);
        return false;
    }
    return true;
}

namespace {

std::string Csv(const std::string& s) {
    if (s.find_first_of(",\"\n") == std::string::npos) return s;
    std::string out = "\"";
    for (char c : s) out += c == '"' ? std::string("\"\"") : std::string(1, c);
    return out + "\"";
}

std::string BandLabel(int band) { return band == 0 ? "avg" : std::to_string(band); }

/* (parameter, band) keys summarised per zone: band rows of reported bands, then single numbers. */
std::vector<std::pair<std::string, int>> ZoneKeys(const Scene& scene) {
    std::vector<std::pair<std::string, int>> keys;
    for (const auto& p : kZoneParameters) {
        if (p == "STI") {
            keys.push_back({p, 0});
            continue;
        }
        for (int b : scene.settings.reportedBands) keys.push_back({p, kNominalBandHz[b]});
        keys.push_back({p + "_M", 0});
    }
    return keys;
}

struct ZoneKey {
    int source;
    std::string zone, parameter;
    int band;
};

/* Zone statistics for every (source, zone, parameter, band), in a fixed order. */
std::vector<std::pair<ZoneKey, ZoneStatistic>> AllZoneStatistics(const Scene& scene,
                                                                  const std::vector<SeatResult>& seats) {
    std::vector<std::pair<ZoneKey, ZoneStatistic>> out;
    const auto zones = ZoneOrder(scene);
    const auto keys = ZoneKeys(scene);
    for (int s = 0; s < static_cast<int>(scene.sources.size()); ++s) {
        for (const auto& zone : zones) {
            for (const auto& [parameter, band] : keys) {
                std::vector<SeatEstimate> estimates;
                for (const auto& seat : seats) {
                    if (seat.source != s || scene.receivers[seat.receiver].zone != zone) continue;
                    const ParameterValue* v = seat.table.Find(parameter, band);
                    SeatEstimate e;
                    if (v && v->value && v->leaveOneOut.size() == kBatchCount) {
                        e.value = v->value;
                        e.replicates = v->leaveOneOut;
                    }
                    estimates.push_back(std::move(e));
                }
                if (estimates.empty()) continue;
                out.push_back({ZoneKey{s, zone, parameter, band}, SummarizeZone(estimates)});
            }
        }
    }
    return out;
}

}  // namespace

std::string FormatSeatsCsv(const Scene& scene, const std::vector<SeatResult>& seats) {
    std::string out = "source,receiver,zone,x,y,z,direct_occluded";
    for (const auto& c : kSeatColumns) out += "," + c + "," + c + "_ci95";
    out += "\n";
    for (const auto& seat : seats) {
        const Receiver& r = scene.receivers[seat.receiver];
        const Vec3 p = scene.ToModel(r.position);
        out += Csv(scene.sources[seat.source].name) + "," + Csv(r.name) + "," + Csv(r.zone) + "," +
               FormatNumber(p.x(), 8) + "," + FormatNumber(p.y(), 8) + "," + FormatNumber(p.z(), 8) + "," +
               (seat.directOccluded ? "1" : "0");
        for (const auto& c : kSeatColumns) {
            const ParameterValue* v = seat.table.Find(c, 0);
            out += ",";
            if (v && v->value) out += FormatNumber(*v->value);
            out += ",";
            if (v && v->ci95) out += FormatNumber(*v->ci95);
        }
        out += "\n";
    }
    return out;
}

std::string FormatZonesCsv(const Scene& scene, const std::vector<SeatResult>& seats) {
    std::string out = "source,zone,parameter,band,n_seats,mean,sd,min,max,ci95\n";
    for (const auto& [key, z] : AllZoneStatistics(scene, seats)) {
        out += Csv(scene.sources[key.source].name) + "," + Csv(key.zone) + "," + key.parameter + "," +
               BandLabel(key.band) + "," + std::to_string(z.nSeats);
        if (z.nSeats > 0)
            out += "," + FormatNumber(z.mean) + "," + FormatNumber(z.sd) + "," + FormatNumber(z.min) + "," +
                   FormatNumber(z.max) + "," + FormatNumber(z.ci95);
        else
            out += ",,,,,";
        out += "\n";
    }
    return out;
}

std::string FormatZoneDifferencesCsv(const Scene& scene, const std::vector<SeatResult>& seats) {
    std::string out = "source,zone_a,zone_b,parameter,band,difference,difference_jnd,ci95_jnd\n";
    const auto stats = AllZoneStatistics(scene, seats);
    const auto zones = ZoneOrder(scene);
    // Index: (source, parameter, band, zone) -> statistic.
    std::map<std::tuple<int, std::string, int, std::string>, const ZoneStatistic*> index;
    for (const auto& [key, z] : stats) index[{key.source, key.parameter, key.band, key.zone}] = &z;
    const auto keys = ZoneKeys(scene);
    for (int s = 0; s < static_cast<int>(scene.sources.size()); ++s)
        for (size_t a = 0; a < zones.size(); ++a)
            for (size_t b = a + 1; b < zones.size(); ++b)
                for (const auto& [parameter, band] : keys) {
                    auto ia = index.find({s, parameter, band, zones[a]});
                    auto ib = index.find({s, parameter, band, zones[b]});
                    if (ia == index.end() || ib == index.end()) continue;
                    const ParameterJnd* jnd = FindJnd(parameter);
                    if (!jnd) continue;
                    auto d = CompareZones(*ia->second, *ib->second, Jnd{jnd->value, jnd->relative});
                    out += Csv(scene.sources[s].name) + "," + Csv(zones[a]) + "," + Csv(zones[b]) + "," + parameter +
                           "," + BandLabel(band);
                    if (d)
                        out += "," + FormatNumber(d->difference) + "," + FormatNumber(d->differenceJnd) + "," +
                               FormatNumber(d->ci95Jnd);
                    else
                        out += ",,,";
                    out += "\n";
                }
    return out;
}

}  // namespace hallwright
