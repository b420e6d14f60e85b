// `hallwright review SCENE.toml [--run DIR] [--json] [--out DIR]`: the design review (flutter,
// echoes, focusing, balcony overhangs, faced absorbers) of a scene, printed and written to
// review.json. With --run, the evidence of a finished `simulate` run is added (review.h).
#include <cstdio>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <memory>
#include <optional>
#include <string>
#include <variant>

#include "command.h"
#include "hallwright/image_sources.h"
#include "hallwright/review.h"
#include "hallwright/room.h"

namespace {

namespace fs = std::filesystem;

std::string ValueText(const hallwright::FindingValue& v) {
    char buf[64];
    if (std::holds_alternative<double>(v)) {
        if (!std::isfinite(std::get<double>(v))) return "n/a";  // null in review.json
        std::snprintf(buf, sizeof buf, "%.4g", std::get<double>(v));
        return buf;
    }
    if (std::holds_alternative<std::string>(v)) return std::get<std::string>(v);
    if (std::holds_alternative<std::vector<std::string>>(v)) {
        std::string s;
        for (const auto& name : std::get<std::vector<std::string>>(v)) s += (s.empty() ? "" : ", ") + name;
        return "[" + s + "]";
    }
    std::string s = "[";
    for (double x : std::get<std::vector<double>>(v)) {
        std::snprintf(buf, sizeof buf, "%s%.4g", s.size() > 1 ? ", " : "", x);
        s += buf;
    }
    return s + "]";
}

std::string Join(const std::vector<std::string>& items, size_t max) {
    std::string s;
    for (size_t i = 0; i < items.size() && i < max; ++i) s += (i ? ", " : "") + items[i];
    if (items.size() > max) s += ", ... (" + std::to_string(items.size()) + " in all)";
    return s;
}

void PrintFindings(const std::string& title, const std::vector<hallwright::Finding>& findings) {
    int faults = 0, warnings = 0, infos = 0;
    for (const auto& f : findings) (f.severity == "fault" ? faults : f.severity == "warning" ? warnings : infos)++;
    std::printf("Design review of %s: %d fault(s), %d warning(s), %d passed\n", title.c_str(), faults, warnings,
                infos);
    for (const auto& f : findings) {
        std::printf("\n[%s] %s: %s\n", f.severity.c_str(), f.rule.c_str(), f.summary.c_str());
        if (!f.surfaces.empty()) std::printf("  surfaces: %s\n", Join(f.surfaces, 8).c_str());
        if (!f.seats.empty()) std::printf("  seats:    %s\n", Join(f.seats, 6).c_str());
        std::string values;
        for (const auto& [k, v] : f.values) values += (values.empty() ? "" : "  ") + k + " = " + ValueText(v);
        std::printf("  values:   %s\n", values.c_str());
        for (const auto& r : f.remedies) std::printf("  remedy:   %s\n", r.c_str());
    }
}

const bool kRegistered = hwcli::AddCommand(
    "review",
    "Design review: flutter, echoes (image sources), focusing, balcony overhangs, faced absorbers\n"
    "Writes review.json into --out (default: beside the scene file). With --run DIR (the --out of\n"
    "`hallwright simulate`), the run's IRs confirm flutter, its paths (--paths) measure focusing\n"
    "and replace the recomputed image sources of the echo rule.\n"
    "Example: hallwright review scenes/theatre/scene.toml --run results/ --out results/",
    [](CLI::App* sub) {
        auto scenePath = std::make_shared<std::string>();
        auto outDir = std::make_shared<std::string>();
        auto json = std::make_shared<bool>(false);
        auto runDir = std::make_shared<std::string>();
        sub->add_option("scene", *scenePath, "scene file (TOML)")->required();
        sub->add_option("--out", *outDir, "folder for review.json (default: the scene's folder)");
        sub->add_flag("--json", *json, "print only the review.json object on stdout");
        sub->add_option("--run", *runDir, "output directory of `hallwright simulate` for this scene (IRs, paths)");
        return [=] {
            hallwright::Diagnostics diag;
            auto room = hallwright::LoadRoom(*scenePath, diag);
            hwcli::Report(diag);
            if (!room) return hwcli::kExitBadInput;
            const auto options = hallwright::ReviewOptionsFrom(room->scene);
            // The run, when given: checked against the scene before anything else.
            std::optional<hallwright::RunEvidence> run;
            if (!runDir->empty()) {
                hallwright::Diagnostics runCheck;
                run = hallwright::ReadRunEvidence(*runDir, room->scene, room->geometry, runCheck);
                hwcli::Report(runCheck);
                if (!run) return hwcli::kExitBadInput;
            }
            // Specular paths for the echo rule: the run's (--paths), else image sources of every
            // source, to the scene's order. (The tracer's diffuse part is not added: the run's
            // histograms are not read back, and a fresh trace would cost a full simulation, so
            // echo findings from specular paths alone are warnings.)
            std::vector<hallwright::ReceiverPaths> paths;
            hallwright::Diagnostics runDiag;
            if (run && run->hasPaths) {
                paths = run->paths;
            } else {
                const auto iso = hallwright::ImageSourceOptionsFrom(room->scene.settings);
                for (size_t s = 0; s < room->scene.sources.size(); ++s) {
                    auto part = hallwright::ComputeImageSources(*room, static_cast<int>(s), iso, runDiag);
                    for (auto& p : part) paths.push_back(std::move(p));
                }
            }
            auto findings = hallwright::ReviewRoom(room->scene, room->geometry, options, &paths);
            if (run) hallwright::AddRunEvidence(findings, room->scene, room->geometry, *run, runDiag);
            hwcli::Report(runDiag);
            if (runDiag.HasErrors()) return hwcli::kExitRunFailure;
            const std::string text = hallwright::FindingsToJson(findings);

            // review.json: written to a temporary name, then renamed (never half-written).
            const fs::path dir = outDir->empty() ? fs::absolute(*scenePath).parent_path() : fs::path(*outDir);
            std::error_code ec;
            fs::create_directories(dir, ec);
            const fs::path target = dir / "review.json", tmp = dir / "review.json.tmp";
            {
                std::ofstream out(tmp, std::ios::binary);
                out << text;
                if (!out) {
                    std::fprintf(stderr, "error: cannot write %s; check that the folder is writable\n",
                                 tmp.string().c_str());
                    return hwcli::kExitRunFailure;
                }
            }
            fs::rename(tmp, target, ec);
            if (ec) {
                std::fprintf(stderr, "error: cannot write %s: %s\n", target.string().c_str(), ec.message().c_str());
                return hwcli::kExitRunFailure;
            }
            if (*json) {
                std::fputs(text.c_str(), stdout);
            } else {
                PrintFindings(room->scene.title, findings);
                std::printf("\nwrote %s\n", target.string().c_str());
            }
            return hwcli::kExitOk;
        };
    });

}  // namespace
