// `hallwright bench [SCENE.toml ...]`: speed of the propagation stages, one JSON line per case
// (scene, case, threads, seats, rays, segments, segments_per_s, wall_s, peak_rss_mb, plus
// cpu_s = process CPU time, a check on wall_s when the machine is busy, and receiver_hits);
// the median of --repeat runs. Cases:
//   trace-1seat      tracer alone (image sources off), first seat only
//   trace-all-seats  tracer for every seat (hybrid rule, image order of the scene)
//   raw-embree       the first casts of trace-1seat again, bare rtcIntersect1 (no bookkeeping):
//                    segments_per_s here against trace-1seat is the bookkeeping overhead
//   image-sources    accelerated image-source search, every seat, --image-order (default 3);
//                    rays = search rays, segments = occlusion queries (not in the default list)
// Further cases (synthesis, full-run) plug into RunCase below. Used by tools/bench.
#include <algorithm>
#include <chrono>
#include <cstdio>
#include <fstream>
#include <functional>
#include <optional>
#include <sstream>
#include <string>
#include <vector>

#include <sys/resource.h>

#include <nlohmann/json.hpp>
#include <oneapi/tbb/task_arena.h>

#include "command.h"
#include "hallwright/image_sources.h"
#include "hallwright/ray_tracer.h"
#include "hallwright/room.h"

namespace {

namespace hw = hallwright;

/* Peak resident set (VmHWM) of this process in MiB; reset before each case (Linux >= 4.0). */
double PeakRssMb() {
    std::ifstream in("/proc/self/status");
    std::string line;
    while (std::getline(in, line))
        if (line.rfind("VmHWM:", 0) == 0) return std::stod(line.substr(6)) / 1024.0;
    return 0;
}
void ResetPeakRss() {
    std::ofstream out("/proc/self/clear_refs");
    out << "5";
}

struct CaseResult {
    int64_t seats = 0, rays = 0, segments = 0, receiverHits = 0;
    double wallS = 0, cpuS = 0, peakRssMb = 0;
};

/* User + system CPU time of the process so far (s): a check on wall time on a busy machine. */
double CpuSeconds() {
    rusage u{};
    getrusage(RUSAGE_SELF, &u);
    return u.ru_utime.tv_sec + u.ru_stime.tv_sec + 1e-6 * (u.ru_utime.tv_usec + u.ru_stime.tv_usec);
}

double Median(std::vector<double> v) {
    std::sort(v.begin(), v.end());
    return v.empty() ? 0 : (v.size() % 2 ? v[v.size() / 2] : 0.5 * (v[v.size() / 2 - 1] + v[v.size() / 2]));
}

/* Runs one case once inside an arena of `threads`; false if the case is unknown. */
bool RunCase(const std::string& name, const hw::Room& room, int64_t rays, uint64_t seed, int imageOrder,
             int threads, CaseResult& out, hw::Diagnostics& diag) {
    tbb::task_arena arena(threads);
    hw::TracerOptions opt;
    opt.rays = rays;
    opt.seed = seed;
    opt.imageOrder = room.scene.settings.imageOrder;
    opt.durationS = room.scene.settings.durationS;
    using Clock = std::chrono::steady_clock;
    if (name == "trace-1seat" || name == "trace-all-seats") {
        if (name == "trace-1seat") {
            opt.recordAll = true;
            opt.receivers = {0};
        }
        auto t0 = Clock::now();
        const double c0 = CpuSeconds();
        hw::TracerResult res = arena.execute([&] { return hw::TraceSource(room, 0, opt, diag); });
        out.wallS = std::chrono::duration<double>(Clock::now() - t0).count();
        out.cpuS = CpuSeconds() - c0;
        out.receiverHits = res.receiverHits;
        out.seats = static_cast<int64_t>(res.histograms.size());
        out.rays = res.rays;
        out.segments = res.segments;
        return true;
    }
    if (name == "image-sources") {
        // Accelerated image-source search for every seat (segments = occlusion queries).
        hw::ImageSourceOptions io = hw::ImageSourceOptionsFrom(room.scene.settings);
        io.order = imageOrder;
        hw::ImageSourceStats stats;
        auto t0 = Clock::now();
        const double c0 = CpuSeconds();
        auto paths = arena.execute([&] { return hw::ComputeImageSources(room, 0, io, diag, &stats); });
        out.wallS = std::chrono::duration<double>(Clock::now() - t0).count();
        out.cpuS = CpuSeconds() - c0;
        out.seats = static_cast<int64_t>(paths.size());
        out.rays = stats.searchRays;
        out.segments = stats.occlusionQueries;
        return true;
    }
    if (name == "raw-embree") {
        // The same casts as trace-1seat (first 4 million), collected untimed.
        opt.recordAll = true;
        opt.receivers = {0};
        std::vector<hw::RawCast> casts = hw::CollectCasts(room, 0, opt, 4000000);
        auto t0 = Clock::now();
        const double c0 = CpuSeconds();
        int64_t hits = arena.execute([&] { return hw::CastRaw(room, casts); });
        out.wallS = std::chrono::duration<double>(Clock::now() - t0).count();
        out.cpuS = CpuSeconds() - c0;
        out.seats = 0;
        out.rays = static_cast<int64_t>(casts.size());
        out.segments = static_cast<int64_t>(casts.size());
        if (hits < 0) return false;
        return true;
    }
    return false;
}

std::vector<std::string> Split(const std::string& s) {
    std::vector<std::string> out;
    std::stringstream in(s);
    std::string item;
    while (std::getline(in, item, ','))
        if (!item.empty()) out.push_back(item);
    return out;
}

const bool kRegistered = hwcli::AddCommand(
    "bench",
    "Measure propagation speed (JSON line per case; see tools/bench)\n"
    "Example: hallwright bench scenes/theatre/scene.toml --threads 1,2",
    [](CLI::App* sub) {
        struct Args {
            std::vector<std::string> scenes;
            std::string cases = "trace-1seat,trace-all-seats,raw-embree";
            std::string threads = "1,2";
            int64_t rays = 0;
            int repeat = 3;
            std::optional<uint64_t> seed;
            int imageOrder = 3;
        };
        auto args = std::make_shared<Args>();
        sub->add_option("scenes", args->scenes, "scene.toml files (default: scenes/theatre/scene.toml)");
        sub->add_option("--cases", args->cases, "comma-separated cases: trace-1seat, trace-all-seats, raw-embree, image-sources");
        sub->add_option("--threads", args->threads, "comma-separated thread counts");
        sub->add_option("--rays", args->rays, "rays per source (default: the scene's [simulation] rays)");
        sub->add_option("--seed", args->seed, "random seed (default: the scene's [simulation] seed)");
        sub->add_option("--image-order", args->imageOrder, "order of the image-sources case (issue 3: 3)")
            ->check(CLI::Range(0, 10));
        sub->add_option("--repeat", args->repeat, "runs per case; the median is printed")->check(CLI::Range(1, 99));
        return [args] {
            if (args->scenes.empty()) args->scenes.push_back("scenes/theatre/scene.toml");
            for (const std::string& path : args->scenes) {
                hw::Diagnostics diag;
                std::unique_ptr<hw::Room> room = hw::LoadRoom(path, diag);
                if (!room) return hwcli::Report(diag);
                if (room->scene.sources.empty() || room->scene.receivers.empty()) {
                    std::fprintf(stderr, "%s: error: bench needs at least one source and one seat\n", path.c_str());
                    return hwcli::kExitBadInput;
                }
                const int64_t rays = args->rays > 0 ? args->rays : room->scene.settings.rays;
                for (const std::string& name : Split(args->cases))
                    for (const std::string& t : Split(args->threads)) {
                        int threads = 0;
                        try {
                            threads = std::stoi(t);
                        } catch (const std::exception&) {
                        }
                        if (threads < 1) {
                            std::fprintf(stderr, "bench: error: --threads takes positive integers, e.g. 1,2 (got \"%s\")\n",
                                         t.c_str());
                            return hwcli::kExitBadCommandLine;
                        }
                        std::vector<double> walls, cpus, rss;
                        CaseResult r;
                        for (int k = 0; k < args->repeat; ++k) {
                            ResetPeakRss();
                            hw::Diagnostics runDiag;
                            const uint64_t seed = args->seed ? *args->seed : room->scene.settings.seed;
                            if (!RunCase(name, *room, rays, seed, args->imageOrder, threads, r, runDiag)) {
                                std::fprintf(stderr, "bench: error: unknown case \"%s\"\n", name.c_str());
                                return hwcli::kExitBadCommandLine;
                            }
                            if (runDiag.HasErrors()) return hwcli::Report(runDiag);
                            walls.push_back(r.wallS);
                            cpus.push_back(r.cpuS);
                            rss.push_back(PeakRssMb());
                        }
                        const double wall = Median(walls);
                        nlohmann::ordered_json j;
                        j["scene"] = path;
                        j["case"] = name;
                        j["threads"] = threads;
                        j["seats"] = r.seats;
                        j["rays"] = r.rays;
                        j["segments"] = r.segments;
                        j["segments_per_s"] = wall > 0 ? static_cast<double>(r.segments) / wall : 0.0;
                        j["wall_s"] = wall;
                        j["peak_rss_mb"] = Median(rss);
                        j["cpu_s"] = Median(cpus);
                        j["receiver_hits"] = r.receiverHits;
                        std::printf("%s\n", j.dump().c_str());
                        std::fflush(stdout);
                    }
            }
            return hwcli::kExitOk;
        };
    });

}  // namespace
