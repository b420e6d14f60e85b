// Reading a finished run's tables back (parameters.csv, seats.csv, optional run.json) for
// `hallwright compare`. Every problem names file:line and how to fix it.
#include <cmath>
#include <cstdlib>
#include <fstream>
#include <map>
#include <sstream>

#include <nlohmann/json.hpp>

#include "hallwright/run_compare.h"
#include "hallwright/scene.h"
#include "util/csv.h"

namespace hallwright {

namespace {

bool ReadFile(const std::string& path, std::string& text, Diagnostics& diag, const std::string& what) {
    std::ifstream in(path, std::ios::binary);
    if (!in) {
        diag.Error(SourceLoc{path, 0, 0, ""}, "cannot open " + what +
                                                  " — give the output directory of `hallwright simulate` (it holds "
                                                  "parameters.csv and seats.csv)");
        return false;
    }
    std::ostringstream ss;
    ss << in.rdbuf();
    text = ss.str();
    return true;
}

/* Column indices of the required names; an error names the missing one. */
bool Columns(const CsvRecord& header, const std::vector<std::string>& names, const std::string& path,
             std::map<std::string, size_t>& index, Diagnostics& diag) {
    for (size_t k = 0; k < header.fields.size(); ++k) index[header.fields[k]] = k;
    for (const auto& n : names)
        if (!index.count(n)) {
            diag.Error(SourceLoc{path, header.line, 0, ""},
                       "the header has no column \"" + n + "\" — this is not a run table of this program's version");
            return false;
        }
    return true;
}

bool Number(const std::string& text, std::optional<double>& out, bool allowEmpty) {
    if (text.empty()) {
        out.reset();
        return allowEmpty;
    }
    char* end = nullptr;
    const double v = std::strtod(text.c_str(), &end);
    if (end != text.c_str() + text.size() || !std::isfinite(v)) return false;
    out = v;
    return true;
}

}  // namespace

std::optional<RunTables> ReadRun(const std::string& dir, Diagnostics& diag) {
    RunTables run;
    run.dir = dir;
    const int errorsBefore = diag.ErrorCount();

    // Model units and up axis from run.json (mesh.units, mesh.up): seats.csv positions use them.
    {
        std::ifstream in(dir + "/run.json", std::ios::binary);
        if (in) {
            std::ostringstream ss;
            ss << in.rdbuf();
            const auto j = nlohmann::json::parse(ss.str(), nullptr, false);
            std::string units;
            if (j.is_object()) {
                if (j.contains("mesh") && j["mesh"].is_object()) {
                    const auto& m = j["mesh"];
                    if (m.contains("units") && m["units"].is_string()) units = m["units"];
                    if (m.contains("up") && m["up"].is_string()) run.modelUp = m["up"];
                }
            }
            if (!units.empty()) {
                try {
                    run.metresPerUnit = ModelUnitScale(units);
                } catch (const std::invalid_argument&) {
                    diag.Warning(SourceLoc{dir + "/run.json", 0, 0, ""},
                                 "unknown model units \"" + units + "\"; seat positions are taken as metres");
                }
            }
        }
    }

    const std::string pPath = dir + "/parameters.csv";
    std::string text;
    std::vector<CsvRecord> recs;
    if (ReadFile(pPath, text, diag, "the run's parameters.csv") && ParseCsv(text, pPath, recs, diag)) {
        std::map<std::string, size_t> col;
        if (recs.empty()) {
            diag.Error(SourceLoc{pPath, 1, 0, ""}, "the file is empty — rerun the simulation");
        } else if (Columns(recs[0], {"source", "receiver", "zone", "band", "parameter", "value", "ci95", "unit", "note"},
                           pPath, col, diag)) {
            for (size_t r = 1; r < recs.size(); ++r) {
                const auto& f = recs[r].fields;
                if (f.size() != recs[0].fields.size()) {
                    diag.Error(SourceLoc{pPath, recs[r].line, 0, ""},
                               "expected " + std::to_string(recs[0].fields.size()) + " fields, found " +
                                   std::to_string(f.size()) + " — the file is garbled; rerun the simulation");
                    continue;
                }
                RunParameter p;
                p.line = recs[r].line;
                p.source = f[col["source"]];
                p.receiver = f[col["receiver"]];
                p.zone = f[col["zone"]];
                p.parameter = f[col["parameter"]];
                p.unit = f[col["unit"]];
                p.note = f[col["note"]];
                const std::string band = f[col["band"]];
                std::optional<double> bandValue;
                if (band == "avg") p.band = 0;
                else if (Number(band, bandValue, false) && *bandValue == std::floor(*bandValue) && *bandValue > 0)
                    p.band = static_cast<int>(*bandValue);
                else {
                    diag.Error(SourceLoc{pPath, recs[r].line, 0, ""},
                               "band \"" + band + "\" is neither a frequency in Hz nor \"avg\"");
                    continue;
                }
                if (!Number(f[col["value"]], p.value, true) || !Number(f[col["ci95"]], p.ci95, true)) {
                    diag.Error(SourceLoc{pPath, recs[r].line, 0, ""},
                               "value or ci95 is not a number (\"" + f[col["value"]] + "\", \"" + f[col["ci95"]] +
                                   "\") — the file is garbled; rerun the simulation");
                    continue;
                }
                if (p.source.empty() || p.receiver.empty() || p.parameter.empty()) {
                    diag.Error(SourceLoc{pPath, recs[r].line, 0, ""}, "source, receiver and parameter must not be empty");
                    continue;
                }
                run.parameters.push_back(std::move(p));
            }
        }
    }

    const std::string sPath = dir + "/seats.csv";
    recs.clear();
    if (ReadFile(sPath, text, diag, "the run's seats.csv") && ParseCsv(text, sPath, recs, diag)) {
        std::map<std::string, size_t> col;
        if (recs.empty()) {
            diag.Error(SourceLoc{sPath, 1, 0, ""}, "the file is empty — rerun the simulation");
        } else if (Columns(recs[0], {"source", "receiver", "zone", "x", "y", "z", "direct_occluded"}, sPath, col, diag)) {
            for (size_t r = 1; r < recs.size(); ++r) {
                const auto& f = recs[r].fields;
                if (f.size() != recs[0].fields.size()) {
                    diag.Error(SourceLoc{sPath, recs[r].line, 0, ""},
                               "expected " + std::to_string(recs[0].fields.size()) + " fields, found " +
                                   std::to_string(f.size()) + " — the file is garbled; rerun the simulation");
                    continue;
                }
                RunSeat s;
                s.line = recs[r].line;
                s.source = f[col["source"]];
                s.receiver = f[col["receiver"]];
                s.zone = f[col["zone"]];
                std::optional<double> x, y, z;
                if (!Number(f[col["x"]], x, false) || !Number(f[col["y"]], y, false) || !Number(f[col["z"]], z, false)) {
                    diag.Error(SourceLoc{sPath, recs[r].line, 0, ""},
                               "the seat position is not three numbers — the file is garbled; rerun the simulation");
                    continue;
                }
                s.position = Vec3(*x, *y, *z);
                s.directOccluded = f[col["direct_occluded"]] == "1";
                run.seats.push_back(std::move(s));
            }
        }
    }
    if (diag.ErrorCount() > errorsBefore) return std::nullopt;
    return run;
}

}  // namespace hallwright
