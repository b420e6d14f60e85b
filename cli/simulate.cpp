// `hallwright simulate SCENE.toml --out DIR`: the whole prediction for every source and seat.
// Wires the stages: room -> image sources + tracer -> synthesis -> parameters -> tables.
#include <algorithm>
#include <atomic>
#include <chrono>
#include <csignal>
#include <cstdio>
#include <filesystem>
#include <cmath>
#include <map>
#include <thread>
#include <unistd.h>

#include <nlohmann/json.hpp>
#include <oneapi/tbb/parallel_for.h>

#include "command.h"
#include "hallwright/air.h"
#include "hallwright/hash.h"
#include "hallwright/image_sources.h"
#include "hallwright/ir_writer.h"
#include "hallwright/listening.h"
#include "hallwright/metrics.h"
#include "hallwright/paths_csv.h"
#include "hallwright/ray_tracer.h"
#include "hallwright/report.h"
#include "hallwright/review.h"
#include "hallwright/response.h"
#include "hallwright/room.h"
#include "hallwright/room_acoustics.h"
#include "hallwright/run_tables.h"
#include "hallwright/spatial_seats.h"
#include "hallwright/versions.h"
#include "simulate_outputs.h"

namespace {

namespace fs = std::filesystem;
using Clock = std::chrono::steady_clock;

std::atomic<bool> gInterrupted{false};
extern "C" void OnInterrupt(int) { gInterrupted.store(true); }

using Options = hwcli::SimulateOptions;

/* Appends `from` to `to`, leaving out warnings and notes whose text `to` already holds: a
   check the tracer repeats for every source (e.g. receiver radii) then shows once per run. */
void AppendOnce(hallwright::Diagnostics& to, const hallwright::Diagnostics& from) {
    for (const auto& d : from.Items()) {
        const std::string text = hallwright::FormatDiagnostic(d);
        const bool repeated = d.severity != hallwright::Severity::kError &&
                              std::any_of(to.Items().begin(), to.Items().end(), [&](const hallwright::Diagnostic& e) {
                                  return hallwright::FormatDiagnostic(e) == text;
                              });
        if (!repeated) to.Add(d.severity, d.at, d.message);
    }
}

/* Progress lines on stderr when it is a terminal (and not --quiet). */
class Progress {
  public:
    explicit Progress(bool quiet) : show_(!quiet && isatty(fileno(stderr))), start_(Clock::now()) {}
    void Stage(const std::string& text) {
        if (!show_) return;
        const double t = std::chrono::duration<double>(Clock::now() - start_).count();
        std::fprintf(stderr, "\r\033[K[%6.1f s] %s", t, text.c_str());
        std::fflush(stderr);
    }
    /* While `work` runs, shows percent, items (`unit`) per second and time left from `done` of `total`. */
    template <typename Work>
    void Counted(const std::string& text, const char* unit, std::atomic<int64_t>& done, int64_t total, Work&& work) {
        if (!show_) {
            work();
            return;
        }
        std::atomic<bool> finished{false};
        const auto t0 = Clock::now();
        std::thread ticker([&] {
            while (!finished.load()) {
                const int64_t n = std::min(done.load(), total);
                const double dt = std::chrono::duration<double>(Clock::now() - t0).count();
                const double rate = dt > 0 ? n / dt : 0;
                char buf[160];
                std::snprintf(buf, sizeof buf, ": %3.0f %%, %.0f %s/s, %.0f s left", 100.0 * n / std::max<int64_t>(total, 1),
                              rate, unit, rate > 0 ? (total - n) / rate : 0.0);
                Stage(text + buf);
                std::this_thread::sleep_for(std::chrono::milliseconds(250));
            }
        });
        work();
        finished.store(true);
        ticker.join();
    }
    void Done() {
        if (show_) std::fprintf(stderr, "\r\033[K");
    }

  private:
    bool show_;
    Clock::time_point start_;
};

double Seconds(Clock::time_point since) { return std::chrono::duration<double>(Clock::now() - since).count(); }

/* Parameter tables of the given receivers of one source (parallel, order-independent). */
void ComputeSeatTables(const hallwright::Scene& scene, int s, const std::vector<hallwright::ReceiverPaths>& paths,
                       const std::vector<hallwright::ReceiverHistogram>& histograms, const std::vector<int>& receivers,
                       std::vector<hallwright::SeatResult>& seats) {
    tbb::parallel_for(size_t(0), receivers.size(), [&](size_t i) {
        const int r = receivers[i];
        hallwright::HistogramMetricsOptions mo;
        mo.bands = scene.settings.reportedBands;
        mo.perBatchValues = false;  // zone statistics use the delete-one-batch replicates only
        mo.speech.speechLevelDbA = scene.speech.levelDb;
        mo.speech.noiseOctaveDb = scene.speech.noiseOctaveDb;
        mo.sourceDirection = (scene.sources[s].position - scene.receivers[r].position).normalized();
        auto& seat = seats[r];
        seat.source = s;
        seat.receiver = r;
        seat.directOccluded = paths[r].directOccluded;
        seat.table = hallwright::ParametersFromHistogram(paths[r], histograms[r], mo);
        hallwright::AddSingleNumbers(seat.table);
    });
}

/* The row a --target-ci entry is checked on: the single number (EDT -> EDT_M), or STI. */
const hallwright::ParameterValue* TargetRow(const hallwright::ParameterTable& table, const std::string& parameter) {
    if (const auto* v = table.Find(parameter + "_M", 0)) return v;
    return table.Find(parameter, 0);
}

/* Why a seat misses the targets ("" when it meets them all). */
std::string MissedTargets(const hallwright::ParameterTable& table, const std::map<std::string, double>& targets) {
    std::string why;
    for (const auto& [parameter, halfWidth] : targets) {
        const auto* v = TargetRow(table, parameter);
        char buf[200];
        if (!v || !v->value) {
            std::snprintf(buf, sizeof buf, "%s not computed (%s)", parameter.c_str(),
                          v && !v->note.empty() ? v->note.c_str() : "no value");
        } else if (!v->ci95 || *v->ci95 > halfWidth) {
            std::snprintf(buf, sizeof buf, "%s ci95 %.3g > %.3g", parameter.c_str(), v->ci95 ? *v->ci95 : -1.0,
                          halfWidth);
        } else {
            continue;
        }
        why += (why.empty() ? "" : "; ") + std::string(buf);
    }
    return why;
}

/* Adds rays in rounds (doubling, spread over the same B batches) to the seats whose 95 %
   half-widths exceed the targets, until all meet them or --max-rays is reached. */
void RefineToTargets(const hallwright::Room& room, int s, const hwcli::SimulateOptions& opt,
                     hallwright::TracerOptions traceOptions, const std::vector<hallwright::ReceiverPaths>& paths,
                     hallwright::TracerResult& traced, std::vector<hallwright::SeatResult>& seats,
                     hwcli::RunRecord& record, Progress& progress, const std::string& label) {
    std::vector<int64_t> raysOf(seats.size(), traceOptions.rays);
    // Every round scores the same spheres (the automatic radius depends on the ray count).
    traceOptions.receiverRadiusM = traced.receiverRadiusM;
    int64_t total = traceOptions.rays;
    for (int round = 1;; ++round) {
        std::vector<int> pending;
        for (size_t r = 0; r < seats.size(); ++r)
            if (!MissedTargets(seats[r].table, opt.targets).empty()) pending.push_back(static_cast<int>(r));
        if (pending.empty() || gInterrupted) break;
        if (total >= opt.maxRays) {
            for (int r : pending)
                record.notConverged.push_back({{"source", room.scene.sources[s].name},
                                               {"receiver", room.scene.receivers[r].name},
                                               {"rays", raysOf[r]},
                                               {"why", MissedTargets(seats[r].table, opt.targets) +
                                                           " after --max-rays " + std::to_string(opt.maxRays)}});
            break;
        }
        const int64_t add = std::min(total, opt.maxRays - total);
        progress.Stage(label + ": round " + std::to_string(round) + ", +" + std::to_string(add) + " rays for " +
                       std::to_string(pending.size()) + " seats above target");
        traceOptions.rays = add;
        traceOptions.receivers = pending;
        traceOptions.seed = traceOptions.seed * 6364136223846793005ULL + 1442695040888963407ULL;  // next stream set
        hallwright::Diagnostics roundDiag;
        auto more = hallwright::TraceSource(room, s, traceOptions, roundDiag);
        if (more.cancelled) break;
        if (roundDiag.HasErrors()) {
            record.Fail(roundDiag);
            break;
        }
        for (size_t i = 0; i < pending.size(); ++i) {
            hallwright::MergeTracerRound(traced.histograms[pending[i]], raysOf[pending[i]], more.histograms[i], add);
            raysOf[pending[i]] += add;
        }
        ComputeSeatTables(room.scene, s, paths, traced.histograms, pending, seats);
        total += add;
        record.extraRays[s] += add;
    }
    record.raysPerSeat[s] = raysOf;
}

int Run(const Options& opt) {
    hwcli::SetThreadCount(opt.threads);
    std::signal(SIGINT, OnInterrupt);
    std::signal(SIGTERM, OnInterrupt);
    const auto tStart = Clock::now();
    nlohmann::ordered_json timings;

    // Load and validate everything before any long work.
    hallwright::Diagnostics diag;
    auto tStage = Clock::now();
    auto room = hallwright::LoadRoom(opt.scene, diag);
    if (!room) return hwcli::Report(diag);
    auto& scene = room->scene;
    if (opt.seed) scene.settings.seed = *opt.seed;
    if (opt.rays) scene.settings.rays = *opt.rays;
    if (scene.sources.empty() || scene.receivers.empty()) {
        diag.Error(hallwright::SourceLoc{opt.scene, 0, 0, ""}, "the scene has no source or no seat — add a [[source]] and a [[receiver]] or [[seating]] block");
        return hwcli::Report(diag);
    }
    std::error_code ec;
    fs::create_directories(opt.out, ec);
    if (ec) {
        std::fprintf(stderr, "%s: error: cannot create the output directory: %s\n", opt.out.c_str(), ec.message().c_str());
        return hwcli::kExitBadCommandLine;
    }
    // The dry recording of --listen is read now, so a bad file fails before the long work.
    std::optional<hallwright::WavData> dry;
    if (!opt.listen.empty()) {
        dry = hallwright::ReadWav(opt.listen, diag);
        if (!dry) {
            diag.Error({opt.listen, 0, 0, ""}, "--listen needs a readable WAV (or FLAC/AIFF) dry recording, mono or stereo");
            return hwcli::Report(diag);
        }
    }
    hwcli::Report(diag);  // warnings so far
    const size_t printedDiagnostics = diag.Items().size();
    timings["load_s"] = Seconds(tStage);

    Progress progress(opt.quiet);
    const auto estimates = hallwright::EstimateRoom(scene, room->geometry);
    const double c = hallwright::SpeedOfSound(scene.air.temperatureC);
    hwcli::RunRecord record;
    record.scene = &scene;
    record.estimates = estimates;

    std::vector<hallwright::SeatResult> seats;
    seats.reserve(scene.sources.size() * scene.receivers.size());
    hwcli::OutputWriter writer(opt.out, scene, room->geometry);
    // Design review: the geometric rules once; echoes per source from its paths and histograms.
    const auto reviewOptions = hallwright::ReviewOptionsFrom(scene);
    std::vector<hallwright::Finding> findings = hallwright::ReviewRoom(scene, room->geometry, reviewOptions);
    const std::vector<int> curveSeats = hallwright::SeatsNearZoneCentroids(scene);
    const std::vector<int> spatialSeats = hallwright::ChooseSpatialSeats(scene, diag);
    std::unique_ptr<hallwright::HrtfSet> hrtf;
    if (!opt.noWav && !spatialSeats.empty()) {
        // The scene's own set must open (an error); the default set may be missing (a warning).
        hallwright::Diagnostics hrtfDiag;
        const bool own = !scene.output.hrtfPath.empty();
        hrtf = hallwright::HrtfSet::Open(own ? scene.output.hrtfPath : hallwright::kDefaultHrtfPath,
                                         scene.settings.sampleRate, hrtfDiag);
        for (const auto& d : hrtfDiag.Items()) {
            if (own)
                diag.Error(scene.output.hrtfAt, d.message + "; fix [output] hrtf or leave it out for the default set");
            else
                diag.Warning(d.at, d.message + " — binaural files are skipped (Debian's libmysofa1 package ships the default set; or "
                                               "set [output] hrtf = \"file.sofa\")");
        }
        if (own && !hrtf) return hwcli::Report(diag);
    }
    std::vector<hallwright::SeatCurves> curves;
    double imageS = 0, traceS = 0, synthS = 0, metricsS = 0;

    for (int s = 0; s < static_cast<int>(scene.sources.size()) && !gInterrupted; ++s) {
        const std::string label = "source " + std::to_string(s + 1) + "/" + std::to_string(scene.sources.size()) +
                                  " (" + scene.sources[s].name + ")";
        // Image sources: exact specular paths up to the image order.
        progress.Stage(label + ": image sources, order " + std::to_string(scene.settings.imageOrder));
        tStage = Clock::now();
        auto imageOptions = hallwright::ImageSourceOptionsFrom(scene.settings);
        imageOptions.exhaustive = opt.exhaustiveImages;
        hallwright::ImageSourceStats imageStats;
        hallwright::Diagnostics runDiag;
        auto paths = hallwright::ComputeImageSources(*room, s, imageOptions, runDiag, &imageStats);
        imageS += Seconds(tStage);
        if (runDiag.HasErrors()) {
            diag.Append(runDiag);
            record.Fail(runDiag);
            break;
        }
        if (gInterrupted) break;

        // Ray tracer: everything else, in B batches.
        progress.Stage(label + ": ray tracing " + std::to_string(scene.settings.rays) + " rays");
        tStage = Clock::now();
        hallwright::TracerOptions traceOptions;
        traceOptions.rays = scene.settings.rays;
        traceOptions.seed = scene.settings.seed;
        traceOptions.imageOrder = scene.settings.imageOrder;
        traceOptions.durationS = scene.settings.durationS;
        traceOptions.cancel = &gInterrupted;
        std::atomic<int64_t> raysDone{0};
        traceOptions.raysDone = &raysDone;
        hallwright::TracerResult traced;
        progress.Counted(label + ": ray tracing " + std::to_string(scene.settings.rays) + " rays", "rays", raysDone,
                      scene.settings.rays, [&] { traced = hallwright::TraceSource(*room, s, traceOptions, runDiag); });
        traceOptions.raysDone = nullptr;
        traceS += Seconds(tStage);
        AppendOnce(diag, runDiag);
        if (runDiag.HasErrors()) {
            record.Fail(runDiag);
            break;
        }
        if (gInterrupted || traced.cancelled) break;
        record.AddSource(s, traced, imageStats);

        // Parameters for every seat; with --target-ci, more rays where intervals are too wide.
        tStage = Clock::now();
        std::vector<hallwright::SeatResult> sourceSeats(paths.size());
        std::vector<int> all(paths.size());
        for (size_t r = 0; r < all.size(); ++r) all[r] = static_cast<int>(r);
        ComputeSeatTables(scene, s, paths, traced.histograms, all, sourceSeats);
        metricsS += Seconds(tStage);
        if (!opt.targets.empty()) {
            tStage = Clock::now();
            RefineToTargets(*room, s, opt, traceOptions, paths, traced, sourceSeats, record, progress, label);
            traceS += Seconds(tStage);
        }

        {
            auto echoes = hallwright::ReviewEchoes(scene, room->geometry, paths, reviewOptions, &traced.histograms);
            findings.insert(findings.end(), echoes.begin(), echoes.end());
        }
        if (s == 0)
            for (int r : curveSeats) {
                auto curve = hallwright::CurvesFromHistogram(paths[r], traced.histograms[r]);
                curve.source = scene.sources[s].name;
                curve.receiver = scene.receivers[r].name;
                curve.zone = scene.receivers[r].zone;
                curves.push_back(std::move(curve));
            }
        if (opt.paths) writer.WritePaths(s, paths, diag);
        if (opt.histograms) writer.WriteHistograms(s, paths, traced.histograms, diag);

        // Synthesis, streamed to WAV one seat at a time per worker.
        tStage = Clock::now();
        if (!opt.noWav) {
            hallwright::SynthesisContext ctx;
            ctx.sampleRate = scene.settings.sampleRate;
            ctx.roomVolumeM3 = room->geometry.Volume();
            ctx.speedOfSound = c;
            ctx.seed = scene.settings.seed;
            ctx.source = s;
            ctx.coherentReflections = scene.output.reflectionsInPhase;
            const auto format = opt.wavFormat == "pcm24" ? hallwright::WavFormat::kPcm24 : hallwright::WavFormat::kFloat32;
            std::atomic<int64_t> seatsDone{0};
            progress.Counted(label + ": impulse responses for " + std::to_string(scene.receivers.size()) + " seats",
                             "seats", seatsDone, static_cast<int64_t>(scene.receivers.size()), [&] {
                                 writer.WriteImpulseResponses(s, paths, traced.histograms, ctx, gInterrupted, format,
                                                              record, diag, &seatsDone);
                             });
            progress.Stage(label + ": AmbiX and binaural files for " + std::to_string(spatialSeats.size()) + " seats");
            writer.WriteSpatialImpulseResponses(s, paths, traced.histograms, spatialSeats, ctx, hrtf.get(), format,
                                                record, diag);
        }
        synthS += Seconds(tStage);
        if (gInterrupted) break;  // this source's WAVs are incomplete: leave it out of the tables
        for (auto& seat : sourceSeats) seats.push_back(std::move(seat));
        record.finishedSources.push_back(s);
    }
    progress.Done();
    timings["image_sources_s"] = imageS;
    timings["ray_tracing_s"] = traceS;
    timings["synthesis_s"] = synthS;
    timings["parameters_s"] = metricsS;

    // Listening files: the dry recording through every binaural IR written (mono IRs of the
    // same seats when there is no HRTF set), one common gain.
    std::vector<hallwright::ReportListening> listening;
    double listeningGainDb = 0;
    if (dry && !gInterrupted) {
        progress.Stage("listening files: " + fs::path(opt.listen).filename().string() + " through " +
                       std::to_string(spatialSeats.size()) + " seats");
        std::vector<hallwright::WavData> irs;
        for (int s : record.finishedSources)
            for (int r : spatialSeats) {
                const std::string layout = hrtf ? "binaural-lr" : "mono";
                const std::string rel = hallwright::ImpulseResponseRelativePath(layout, scene.sources[s].name,
                                                                                scene.receivers[r].name);
                auto ir = hallwright::ReadWav((fs::path(opt.out) / rel).string(), diag);
                if (!ir) continue;
                irs.push_back(std::move(*ir));
                hallwright::ReportListening l;
                l.source = scene.sources[s].name;
                l.seat = scene.receivers[r].name;
                l.zone = scene.receivers[r].zone;
                l.layout = layout;
                l.file = "listening/" + hallwright::SafeFileComponent(l.source) + "__" +
                         hallwright::SafeFileComponent(l.seat) + ".wav";
                listening.push_back(l);
            }
        if (!hrtf) diag.Warning({opt.listen, 0, 0, ""}, "no HRTF set, so the listening files are mono, not binaural");
        auto set = hallwright::RenderListeningSet(*dry, irs, -1.0, diag);
        std::error_code dirError;
        fs::create_directories(fs::path(opt.out) / "listening", dirError);
        if (set.ok) {
            listeningGainDb = set.gainDb;
            for (size_t i = 0; i < listening.size(); ++i) {
                listening[i].peakDbfs = set.peakDbfs[i];
                if (!hallwright::WriteWav((fs::path(opt.out) / listening[i].file).string(), set.renders[i],
                                          hallwright::WavFormat::kFloat32, diag))
                    listening.clear();
            }
        } else {
            listening.clear();
        }
    }

    // Tables (written even after an interruption, for the sources that finished).
    tStage = Clock::now();
    writer.WriteTables(seats, diag);
    hallwright::WriteTextFileAtomic((std::filesystem::path(opt.out) / "review.json").string(),
                                    hallwright::FindingsToJson(findings), diag);
    {
        auto input = hallwright::MakeReportInput(scene, room->geometry, seats, estimates);
        input.programVersion = std::string("hallwright ") + HALLWRIGHT_VERSION;
        input.curves = std::move(curves);
        input.findingsJson = hallwright::FindingsToJson(findings);
        for (const auto& d : diag.Items()) input.warnings.push_back(hallwright::FormatDiagnostic(d));
        input.raysPerSource = static_cast<int>(scene.settings.rays);
        input.listening = listening;
        input.listeningDry = fs::path(opt.listen).filename().string();
        input.listeningGainDb = listeningGainDb;
        hallwright::WriteTextFileAtomic((std::filesystem::path(opt.out) / "report.html").string(),
                                        hallwright::RenderReport(input), diag);
    }
    timings["tables_s"] = Seconds(tStage);
    timings["total_s"] = Seconds(tStart);
    record.interrupted = gInterrupted.load();
    writer.WriteRunJson(opt, record, timings, diag);
    for (size_t i = printedDiagnostics; i < diag.Items().size(); ++i)
        std::fprintf(stderr, "%s\n", hallwright::FormatDiagnostic(diag.Items()[i]).c_str());
    if (record.failed || record.interrupted) {
        std::fprintf(stderr, "hallwright: %s; the files in %s are complete for the sources listed in run.json\n",
                     record.interrupted ? "interrupted" : "the run failed", opt.out.c_str());
        return hwcli::kExitRunFailure;
    }
    if (diag.HasErrors()) return hwcli::kExitRunFailure;
    if (!opt.quiet)
        std::printf("results for %zu seats x %zu sources in %s (%.1f s)\n", scene.receivers.size(),
                    scene.sources.size(), opt.out.c_str(), Seconds(tStart));
    if (!listening.empty())
        std::printf("%zu listening files in %s/listening/ (one common gain, %+.1f dB; the loudest peaks at -1 dBFS).\n"
                    "CAUTION: start playback quietly, especially on headphones; these files are normalised, "
                    "not calibrated to the hall's level.\n",
                    listening.size(), opt.out.c_str(), listeningGainDb);
    return hwcli::kExitOk;
}

/* Parses "C80=0.5,G=0.5,EDT=0.05" into parameter -> half-width. */
bool ParseTargets(const std::string& text, std::map<std::string, double>& targets, std::string& error) {
    size_t start = 0;
    while (start <= text.size()) {
        const size_t end = std::min(text.find(',', start), text.size());
        const std::string item = text.substr(start, end - start);
        const size_t eq = item.find('=');
        if (eq == std::string::npos || eq == 0) {
            error = "expects PARAM=VALUE,... (e.g. C80=0.5,G=0.5); got \"" + item + "\"";
            return false;
        }
        const std::string name = item.substr(0, eq);
        if (!hallwright::FindJnd(name)) {
            error = "unknown parameter \"" + name + "\" (use EDT, T20, T30, C50, C80, D50, Ts, G, LF, LFC or STI)";
            return false;
        }
        char* endp = nullptr;
        const double v = std::strtod(item.c_str() + eq + 1, &endp);
        if (endp == item.c_str() + eq + 1 || *endp != 0 || !(v > 0) || !std::isfinite(v)) {
            error = "the target of " + name + " must be a positive number in its unit (got \"" + item.substr(eq + 1) + "\")";
            return false;
        }
        targets[name] = v;
        start = end + 1;
    }
    return true;
}

const bool kRegistered = hwcli::AddCommand(
    "simulate",
    "Predict impulse responses and ISO 3382-1 parameters for every source and seat\n"
    "Example: hallwright simulate scenes/theatre/scene.toml --out results --paths",
    [](CLI::App* sub) {
        auto opt = std::make_shared<Options>();
        sub->add_option("scene", opt->scene, "scene file (TOML)")->required();
        sub->add_option("--out", opt->out, "output directory (created if needed)")->required();
        sub->add_flag("--paths", opt->paths, "also write DIR/paths/<source>__<seat>.csv (specular paths)");
        sub->add_flag("--histograms", opt->histograms, "also write DIR/histograms/<source>__<seat>.csv");
        sub->add_flag("--exhaustive-images", opt->exhaustiveImages,
                      "enumerate every image source instead of the ray-guided search");
        sub->add_flag("--no-wav", opt->noWav, "skip the impulse-response WAV files");
        sub->add_option("--wav-format", opt->wavFormat, "sample format of the WAV files")
            ->check(CLI::IsMember({"float32", "pcm24"}));
        sub->add_flag("--quiet", opt->quiet, "no progress display");
        auto* noWav = sub->get_option("--no-wav");
        sub->add_option("--listen", opt->listen,
                        "dry recording (mono or stereo WAV) to render through the seats with binaural files, "
                        "into DIR/listening/ and the report")
            ->excludes(noWav);
        sub->add_option("--threads", opt->threads, "worker threads (0 = all cores)")->check(CLI::NonNegativeNumber);
        sub->add_option("--seed", opt->seed, "random seed (overrides [simulation] seed)");
        sub->add_option("--rays", opt->rays, "rays per source (overrides [simulation] rays)")
            ->check(CLI::PositiveNumber);
        sub->add_option("--target-ci", opt->targetText,
                        "add rays until every seat's 95 % half-width is within target, e.g. C80=0.5,G=0.5,EDT=0.05 "
                        "(in the parameter's unit; checked on the single-number values)");
        sub->add_option("--max-rays", opt->maxRays, "upper limit of rays per source for --target-ci")
            ->check(CLI::PositiveNumber);
        return [opt] {
            if (!opt->targetText.empty()) {
                std::string error;
                if (!ParseTargets(opt->targetText, opt->targets, error)) {
                    std::fprintf(stderr, "hallwright simulate: error: --target-ci %s\n", error.c_str());
                    return hwcli::kExitBadCommandLine;
                }
            }
            return Run(*opt);
        };
    });

}  // namespace
