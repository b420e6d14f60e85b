#include "simulate_outputs.h"

#include <algorithm>
#include <filesystem>

#include <oneapi/tbb/parallel_for.h>

#include "hallwright/hash.h"
#include "hallwright/histogram_csv.h"
#include "hallwright/ir_writer.h"
#include "hallwright/parameters_csv.h"
#include "hallwright/paths_csv.h"
#include "hallwright/versions.h"

namespace hwcli {

namespace fs = std::filesystem;
using nlohmann::ordered_json;

namespace {
ordered_json BandsJson(const hallwright::Bands& b) {
    ordered_json j = ordered_json::object();
    for (int i = 0; i < hallwright::kBandCount; ++i) j[std::to_string(hallwright::kNominalBandHz[i])] = b[i];
    return j;
}
}  // namespace

void RunRecord::AddSource(int source, const hallwright::TracerResult& traced,
                          const hallwright::ImageSourceStats& images) {
    ordered_json j;
    j["source"] = scene->sources[source].name;
    j["rays"] = traced.rays;
    j["sub_rays"] = traced.subRays;
    j["segments"] = traced.segments;
    j["reflections"] = traced.reflections;
    j["escaped_rays"] = traced.escapedRays;
    j["duration_s"] = traced.durationS;
    j["receiver_radius_m"] = traced.receiverRadiusM;
    j["image_sources"] = {{"images", images.images},
                          {"paths", images.paths},
                          {"search_rays", images.searchRays},
                          {"occlusion_queries", images.occlusionQueries}};
    j["energy_balance"] = {{"emitted", BandsJson(traced.emitted)},
                           {"absorbed", BandsJson(traced.absorbed)},
                           {"air", BandsJson(traced.air)},
                           {"escaped", BandsJson(traced.escaped)},
                           {"remaining", BandsJson(traced.remaining)}};
    sources.push_back(std::move(j));
}

void RunRecord::Fail(const hallwright::Diagnostics& diag) {
    failed = true;
    for (const auto& d : diag.Items())
        if (d.severity == hallwright::Severity::kError) errors.push_back(hallwright::FormatDiagnostic(d));
}

void OutputWriter::WritePaths(int source, const std::vector<hallwright::ReceiverPaths>& paths,
                              hallwright::Diagnostics& diag) {
    hallwright::WritePathsCsv(dir_, scene_, geometry_, source, paths, diag);
}

void OutputWriter::WriteHistograms(int source, const std::vector<hallwright::ReceiverPaths>& paths,
                                   const std::vector<hallwright::ReceiverHistogram>& histograms,
                                   hallwright::Diagnostics& diag) {
    hallwright::WriteHistogramCsv(dir_, scene_, histograms, &paths, diag);
}

void OutputWriter::WriteTables(const std::vector<hallwright::SeatResult>& seats, hallwright::Diagnostics& diag) {
    std::vector<hallwright::ParameterRow> rows;
    for (const auto& seat : seats) {
        const auto& r = scene_.receivers[seat.receiver];
        auto seatRows = hallwright::ToRows(seat.table, scene_.sources[seat.source].name, r.name, r.zone);
        rows.insert(rows.end(), seatRows.begin(), seatRows.end());
    }
    hallwright::WriteParametersCsv((fs::path(dir_) / "parameters.csv").string(), rows, diag);
    hallwright::WriteTextFileAtomic((fs::path(dir_) / "seats.csv").string(), hallwright::FormatSeatsCsv(scene_, seats),
                                    diag);
    hallwright::WriteTextFileAtomic((fs::path(dir_) / "zones.csv").string(), hallwright::FormatZonesCsv(scene_, seats),
                                    diag);
    hallwright::WriteTextFileAtomic((fs::path(dir_) / "zone-differences.csv").string(),
                                    hallwright::FormatZoneDifferencesCsv(scene_, seats), diag);
}

void OutputWriter::WriteRunJson(const SimulateOptions& options, const RunRecord& record,
                                const ordered_json& timings, hallwright::Diagnostics& diag) {
    const auto& s = scene_.settings;
    ordered_json j;
    j["program"] = "hallwright";
    ordered_json versions = ordered_json::object();
    for (const auto& [name, version] : hallwright::LibraryVersions()) versions[name] = version;
    j["versions"] = versions;
    j["scene"] = {{"path", scene_.scenePath},
                  {"sha256", hallwright::Sha256OfFile(scene_.scenePath).value_or("")},
                  {"title", scene_.title}};
    j["mesh"] = {{"path", scene_.meshPath},
                 {"sha256", hallwright::Sha256OfFile(scene_.meshPath).value_or("")},
                 {"units", scene_.modelUnits},
                 {"up", scene_.modelUp}};
    ordered_json reported = ordered_json::array();
    for (int b : s.reportedBands) reported.push_back(hallwright::kNominalBandHz[b]);
    j["settings"] = {{"rays", s.rays},
                     {"image_order", s.imageOrder},
                     {"duration_s", s.durationS ? ordered_json(*s.durationS) : ordered_json("derived")},
                     {"sample_rate", s.sampleRate},
                     {"seed", s.seed},
                     {"reported_bands", reported},
                     {"batches", hallwright::kBatchCount},
                     {"exhaustive_images", options.exhaustiveImages},
                     {"reflection_phase", scene_.output.reflectionsInPhase ? "in_phase" : "random"},
                     {"air", {{"temperature_c", scene_.air.temperatureC},
                              {"humidity_pct", scene_.air.humidityPct},
                              {"pressure_kpa", scene_.air.pressureKPa}}}};
    j["seed"] = s.seed;
    j["room"] = {{"volume_m3", record.estimates.volumeM3},
                 {"surface_area_m2", record.estimates.surfaceAreaM2},
                 {"sabine_s", BandsJson(record.estimates.sabineS)},
                 {"eyring_s", BandsJson(record.estimates.eyringS)}};
    j["sources"] = record.sources;
    ordered_json missing = ordered_json::array();
    for (int src = 0; src < static_cast<int>(scene_.sources.size()); ++src)
        if (std::find(record.finishedSources.begin(), record.finishedSources.end(), src) == record.finishedSources.end())
            missing.push_back(scene_.sources[src].name);
    j["sources_missing"] = missing;
    if (!options.targets.empty()) {
        ordered_json targets = ordered_json::object();
        for (const auto& [p, v] : options.targets) targets[p] = v;
        ordered_json extra = ordered_json::object();
        for (const auto& [src, n] : record.extraRays) extra[scene_.sources[src].name] = n;
        j["target_ci"] = {{"targets", targets},
                          {"max_rays", options.maxRays},
                          {"extra_rays", extra},
                          {"not_converged", record.notConverged}};
    }
    j["wav_files"] = record.wavFiles;
    j["seats"] = scene_.receivers.size();
    j["calibration"] = {{"reference_energy", hallwright::GReferenceEnergy()},
                        {"definition", hallwright::GReferenceDefinition()},
                        {"histogram_reference_energy", hallwright::kReferenceEnergy10m}};
    j["timings_s"] = timings;
    ordered_json warnings = ordered_json::array();
    for (const auto& d : diag.Items())
        if (d.severity != hallwright::Severity::kError) warnings.push_back(hallwright::FormatDiagnostic(d));
    j["warnings"] = warnings;
    j["errors"] = record.errors;
    j["complete"] = !record.failed && !record.interrupted;
    j["interrupted"] = record.interrupted;
    j["cautions"] = {
        "Predictions are estimates from a geometric model, not validated against measured halls.",
        "Intervals (ci95) cover Monte Carlo noise only, not uncertainty in the material data.",
        "A licensed acoustician must check results against local codes and measurements before anything is built.",
        "Impulse responses can be loud when played: start playback quietly."};
    hallwright::WriteTextFileAtomic((fs::path(dir_) / "run.json").string(), j.dump(2) + "\n", diag);
}

}  // namespace hwcli

namespace hwcli {

namespace {
hallwright::IrFileInfo FileInfo(const hallwright::Scene& scene, int source, int receiver, uint64_t seed) {
    const auto& src = scene.sources[source];
    const auto& seat = scene.receivers[receiver];
    hallwright::IrFileInfo info;
    info.sourceName = src.name;
    info.sourcePosition = scene.ToModel(src.position);
    info.seatName = seat.name;
    info.seatPosition = scene.ToModel(seat.position);
    info.zone = seat.zone;
    info.facing = scene.DirectionToModel(seat.facing);
    info.sourceDirection = scene.DirectionToModel((src.position - seat.position).normalized());
    info.up = scene.DirectionToModel(hallwright::Vec3::UnitY());
    info.frame = "model";
    info.seed = seed;
    return info;
}
}  // namespace

void OutputWriter::WriteSpatialImpulseResponses(int source, const std::vector<hallwright::ReceiverPaths>& paths,
                                                const std::vector<hallwright::ReceiverHistogram>& histograms,
                                                const std::vector<int>& receivers,
                                                const hallwright::SynthesisContext& context,
                                                const hallwright::HrtfSet* hrtf, hallwright::WavFormat format,
                                                RunRecord& record, hallwright::Diagnostics& diag) {
    std::vector<hallwright::Diagnostics> perSeat(receivers.size());
    std::atomic<int64_t> written{0};
    tbb::parallel_for(size_t(0), receivers.size(), [&](size_t i) {
        const int r = receivers[i];
        hallwright::SynthesisContext ctx = context;
        ctx.source = source;
        ctx.receiver = r;
        const auto info = FileInfo(scene_, source, r, ctx.seed);
        auto ambix = hallwright::SynthesizeAmbix(paths[r], histograms[r], ctx, scene_.receivers[r].facing, perSeat[i]);
        if (!perSeat[i].HasErrors() && hallwright::WriteImpulseResponseFiles(dir_, ambix, info, format, perSeat[i]))
            ++written;
        if (!hrtf) return;
        auto binaural = hallwright::SynthesizeBinaural(paths[r], histograms[r], ctx, scene_.receivers[r].facing,
                                                       *hrtf, perSeat[i]);
        if (!perSeat[i].HasErrors() && hallwright::WriteImpulseResponseFiles(dir_, binaural, info, format, perSeat[i]))
            ++written;
    });
    for (const auto& d : perSeat) diag.Append(d);
    record.wavFiles += written.load();
}

void OutputWriter::WriteImpulseResponses(int source, const std::vector<hallwright::ReceiverPaths>& paths,
                                         const std::vector<hallwright::ReceiverHistogram>& histograms,
                                         const hallwright::SynthesisContext& context, const std::atomic<bool>& stop,
                                         hallwright::WavFormat format, RunRecord& record,
                                         hallwright::Diagnostics& diag, std::atomic<int64_t>* seatsDone) {
    // One seat at a time per worker: synthesize, write, free. Diagnostics kept per seat and
    // appended in seat order, so messages do not depend on the thread count.
    std::vector<hallwright::Diagnostics> perSeat(histograms.size());
    std::atomic<int64_t> written{0};
    tbb::parallel_for(size_t(0), histograms.size(), [&](size_t i) {
        if (stop.load()) return;
        const auto& hist = histograms[i];
        hallwright::SynthesisContext ctx = context;
        ctx.source = source;
        ctx.receiver = hist.receiver;
        auto ir = hallwright::Synthesize(paths[i], hist, ctx, perSeat[i]);
        if (perSeat[i].HasErrors()) return;
        const auto info = FileInfo(scene_, source, hist.receiver, ctx.seed);
        if (hallwright::WriteImpulseResponseFiles(dir_, ir, info, format, perSeat[i])) ++written;
        if (seatsDone) seatsDone->fetch_add(1, std::memory_order_relaxed);
    });
    for (const auto& d : perSeat) diag.Append(d);
    record.wavFiles += written.load();
}

}  // namespace hwcli
