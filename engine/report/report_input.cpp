// Report inputs from a run: plan and section geometry, seats, zone statistics and differences,
// and the per-seat curves (Schroeder integral and energy-time curve).
#include <algorithm>
#include <cmath>
#include <map>
#include <set>

#include "hallwright/metrics.h"
#include "hallwright/report.h"
#include "hallwright/spatial_seats.h"
#include "hallwright/zones.h"

namespace hallwright {

namespace {

const Vec3 kUp(0, 1, 0);  // internal frame: y up

/* The plan frame: u along the main axis, v = u x up (a rotation of the x-z plane, no mirror). */
struct PlanFrame {
    Vec3 axis = Vec3(1, 0, 0), across = Vec3(0, 0, 1);
    PlanPoint Project(const Vec3& p) const { return {p.dot(axis), p.dot(across)}; }
};

PlanFrame FrameFor(const Scene& scene) {
    PlanFrame f;
    if (scene.sources.empty() || scene.receivers.empty()) return f;
    Vec3 centroid = Vec3::Zero();
    for (const auto& r : scene.receivers) centroid += r.position;
    centroid /= static_cast<double>(scene.receivers.size());
    Vec3 d = centroid - scene.sources[0].position;
    d.y() = 0;
    if (d.norm() < 1e-6) return f;
    f.axis = d.normalized();
    f.across = f.axis.cross(kUp).normalized();
    return f;
}

/* True when, walking from p along dir through the model, some stretch after the first surface
   met is room space again: a surface above with room above it (an overhang), or with dir down,
   a floor with room below it (an upper level). */
bool RoomBeyondFirstSurface(const Geometry& geometry, const Vec3& p, const Vec3& dir) {
    Vec3 from = p;
    std::optional<double> previous;
    for (int k = 0; k < 6; ++k) {
        auto hit = geometry.Rays().Intersect(from, dir, 1e-6);
        if (!hit) return false;
        const Vec3 at = from + dir * hit->t;
        if (previous && hit->t > 0.05 && geometry.Contains(from + dir * (0.5 * hit->t))) return true;
        previous = hit->t;
        from = at + dir * 1e-4;
    }
    return false;
}

std::vector<char> UnderOverhang(const Scene& scene, const Geometry& geometry) {
    std::vector<char> out(scene.receivers.size(), 0);
    for (size_t i = 0; i < scene.receivers.size(); ++i)
        out[i] = RoomBeyondFirstSurface(geometry, scene.receivers[i].position, kUp) ? 1 : 0;
    return out;
}

std::string TableName(const std::string& parameter, int band) {
    if (band != 0 || parameter == "STI") return parameter;
    return parameter + "_M";
}

}  // namespace

const ReportValue* ReportSeat::Find(int source, const std::string& parameter, int band) const {
    if (source < 0 || source >= static_cast<int>(values.size())) return nullptr;
    for (const auto& v : values[source])
        if (v.parameter == parameter && v.band == band) return &v;
    return nullptr;
}

ReportGeometry ReportGeometryFrom(const Scene& scene, const Geometry& geometry) {
    ReportGeometry g;
    const PlanFrame frame = FrameFor(scene);
    const Mesh& mesh = geometry.GetMesh();

    // Plan: floors (normal into the room pointing up) filled, near-vertical faces as segments.
    double minU = 1e300, minV = 1e300, maxU = -1e300, maxV = -1e300;
    for (const Face& face : geometry.Faces()) {
        const double ny = face.normal.y();
        for (uint32_t t : face.triangles) {
            std::vector<PlanPoint> pts;
            for (int c = 0; c < 3; ++c) {
                pts.push_back(frame.Project(mesh.Vertex(t, c)));
                minU = std::min(minU, pts.back()[0]);
                maxU = std::max(maxU, pts.back()[0]);
                minV = std::min(minV, pts.back()[1]);
                maxV = std::max(maxV, pts.back()[1]);
            }
            if (ny > 0.3) {
                g.floors.push_back(pts);
            } else if (std::abs(ny) < 0.3) {
                // A near-vertical triangle projects to (almost) a segment: keep its longest edge.
                int best = 0;
                double bestLen = -1;
                for (int e = 0; e < 3; ++e) {
                    const auto& a = pts[e];
                    const auto& b = pts[(e + 1) % 3];
                    const double len = std::hypot(a[0] - b[0], a[1] - b[1]);
                    if (len > bestLen) {
                        bestLen = len;
                        best = e;
                    }
                }
                if (bestLen > 1e-6) g.walls.push_back({pts[best], pts[(best + 1) % 3]});
            }
        }
    }
    if (minU > maxU) minU = minV = 0, maxU = maxV = 1;
    g.planMin = {minU, minV};
    g.planMax = {maxU, maxV};
    for (const auto& s : scene.sources) g.sources.push_back({s.name, frame.Project(s.position)});

    // Section through the seats under an overhang: the vertical plane along the main axis at
    // the mean across-coordinate of those seats.
    const auto under = UnderOverhang(scene, geometry);
    double sumV = 0;
    int n = 0;
    for (size_t i = 0; i < under.size(); ++i)
        if (under[i]) sumV += frame.Project(scene.receivers[i].position)[1], ++n;
    if (n == 0) return g;
    g.hasSection = true;
    g.sectionV = sumV / n;
    double minH = 1e300, maxH = -1e300, minS = 1e300, maxS = -1e300;
    for (size_t t = 0; t < mesh.TriangleCount(); ++t) {
        std::array<double, 3> d;
        for (int c = 0; c < 3; ++c) d[c] = mesh.Vertex(t, c).dot(frame.across) - g.sectionV;
        std::vector<PlanPoint> cut;
        for (int e = 0; e < 3; ++e) {
            const double da = d[e], db = d[(e + 1) % 3];
            if ((da < 0) == (db < 0) || da == db) continue;
            const double s = da / (da - db);
            const Vec3 p = mesh.Vertex(t, e) + s * (mesh.Vertex(t, (e + 1) % 3) - mesh.Vertex(t, e));
            cut.push_back({p.dot(frame.axis), p.y()});
        }
        if (cut.size() != 2) continue;
        g.sectionSegments.push_back({cut[0], cut[1]});
        for (const auto& p : cut) {
            minS = std::min(minS, p[0]);
            maxS = std::max(maxS, p[0]);
            minH = std::min(minH, p[1]);
            maxH = std::max(maxH, p[1]);
        }
    }
    if (g.sectionSegments.empty()) {
        g.hasSection = false;
        return g;
    }
    g.sectionMin = {minS, minH};
    g.sectionMax = {maxS, maxH};
    return g;
}

ReportInput MakeReportInput(const Scene& scene, const Geometry& geometry, const std::vector<SeatResult>& seats,
                            const RoomEstimates& room) {
    ReportInput in;
    in.title = scene.title.empty() ? scene.scenePath : scene.title;
    for (const auto& s : scene.sources) in.sources.push_back(s.name);
    in.zones = ZoneOrder(scene);
    in.reportedBandsHz.clear();
    for (int b : scene.settings.reportedBands) in.reportedBandsHz.push_back(kNominalBandHz[b]);
    in.geometry = ReportGeometryFrom(scene, geometry);
    in.room = room;
    in.raysPerSource = static_cast<int>(scene.settings.rays);

    // Seats: one per receiver, values per source.
    const PlanFrame frame = FrameFor(scene);
    const auto under = UnderOverhang(scene, geometry);
    const int nSources = static_cast<int>(scene.sources.size());
    in.seats.resize(scene.receivers.size());
    for (size_t i = 0; i < scene.receivers.size(); ++i) {
        const Receiver& r = scene.receivers[i];
        ReportSeat& s = in.seats[i];
        s.name = r.name;
        s.zone = r.zone;
        s.model = scene.ToModel(r.position);
        const PlanPoint p = frame.Project(r.position);
        s.u = p[0];
        s.v = p[1];
        s.height = r.position.y();
        s.underOverhang = under[i] != 0;
        s.upperLevel = RoomBeyondFirstSurface(geometry, r.position, -kUp);
        s.values.resize(nSources);
        s.directOccluded.assign(nSources, 0);
    }
    std::vector<std::pair<std::string, int>> keys;
    for (const auto& p : kReportParameters) {
        keys.push_back({p, 0});
        if (p == "STI") continue;
        for (int hz : in.reportedBandsHz) keys.push_back({p, hz});
    }
    for (const SeatResult& r : seats) {
        if (r.receiver < 0 || r.receiver >= static_cast<int>(in.seats.size()) || r.source < 0 ||
            r.source >= nSources)
            continue;
        ReportSeat& s = in.seats[r.receiver];
        s.directOccluded[r.source] = r.directOccluded ? 1 : 0;
        for (const auto& [p, band] : keys) {
            ReportValue v{p, band, std::nullopt, std::nullopt};
            if (const ParameterValue* pv = r.table.Find(TableName(p, band), band)) {
                v.value = pv->value;
                v.ci95 = pv->ci95;
            }
            s.values[r.source].push_back(v);
        }
    }

    // Zone statistics with the delete-one-batch jackknife (zones.h), then every pair of zones.
    for (int src = 0; src < nSources; ++src) {
        std::map<std::pair<std::string, std::pair<std::string, int>>, ZoneStatistic> stats;
        for (const auto& zone : in.zones) {
            for (const auto& [p, band] : keys) {
                std::vector<SeatEstimate> estimates;
                for (const SeatResult& r : seats) {
                    if (r.source != src || r.receiver < 0 || r.receiver >= static_cast<int>(scene.receivers.size()) ||
                        scene.receivers[r.receiver].zone != zone)
                        continue;
                    SeatEstimate e;
                    const ParameterValue* pv = r.table.Find(TableName(p, band), band);
                    if (pv && pv->value && pv->leaveOneOut.size() == static_cast<size_t>(kBatchCount)) {
                        e.value = pv->value;
                        e.replicates = pv->leaveOneOut;
                    }
                    estimates.push_back(std::move(e));
                }
                if (estimates.empty()) continue;
                ZoneStatistic z = SummarizeZone(estimates);
                if (z.nSeats == 0) continue;
                in.zoneStats.push_back({src, zone, p, band, z.nSeats, z.mean, z.sd, z.min, z.max, z.ci95});
                stats[{zone, {p, band}}] = std::move(z);
            }
        }
        for (size_t a = 0; a < in.zones.size(); ++a)
            for (size_t b = a + 1; b < in.zones.size(); ++b)
                for (const auto& [p, band] : keys) {
                    auto ia = stats.find({in.zones[a], {p, band}});
                    auto ib = stats.find({in.zones[b], {p, band}});
                    const ParameterJnd* jnd = FindJnd(p);
                    if (ia == stats.end() || ib == stats.end() || !jnd) continue;
                    auto d = CompareZones(ia->second, ib->second, Jnd{jnd->value, jnd->relative});
                    if (!d) continue;
                    in.zoneDifferences.push_back({src, in.zones[a], in.zones[b], p, band, d->difference,
                                                  d->differenceJnd, d->ci95Jnd, ia->second.mean, ib->second.mean});
                }
    }
    return in;
}

SeatCurves CurvesFromHistogram(const ReceiverPaths& paths, const ReceiverHistogram& hist, const std::vector<int>& bands) {
    SeatCurves c;
    const int n = hist.binCount;
    c.timeS.resize(n);
    for (int k = 0; k < n; ++k) c.timeS[k] = k * kBinWidthS;
    for (int band : bands) {
        if (band < 0 || band >= kBandCount) continue;
        // Energy per 1 ms bin: tracer mean over the batches plus the specular impulses.
        std::vector<double> e(n, 0.0);
        for (int k = 0; k < n; ++k) {
            double s = 0;
            for (int b = 0; b < kBatchCount; ++b) s += hist.Energy(b, k, band);
            e[k] = s / kBatchCount;
        }
        for (const SpecularPath& p : paths.paths) {
            const int k = static_cast<int>(std::floor(p.delayS / kBinWidthS));
            if (k >= 0 && k < n) e[k] += p.energy[band];
        }
        SeatCurves::Band out;
        out.hz = kNominalBandHz[band];
        const double peak = n > 0 ? *std::max_element(e.begin(), e.end()) : 0.0;
        out.etcDb.resize(n);
        out.schroederDb.resize(n);
        // Schroeder (1965): backward integral of the energy, in dB re the total.
        std::vector<double> back(n + 1, 0.0);
        for (int k = n - 1; k >= 0; --k) back[k] = back[k + 1] + e[k];
        for (int k = 0; k < n; ++k) {
            out.etcDb[k] = peak > 0 && e[k] > 0 ? 10 * std::log10(e[k] / peak) : -200.0;
            out.schroederDb[k] = back[0] > 0 && back[k] > 0 ? 10 * std::log10(back[k] / back[0]) : -200.0;
        }
        c.bands.push_back(std::move(out));
    }
    return c;
}

}  // namespace hallwright
