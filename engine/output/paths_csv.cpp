// Specular paths as CSV files (see paths_csv.h).
#include "hallwright/ir_writer.h"
#include "hallwright/paths_csv.h"

#include <cstdio>
#include <filesystem>
#include <fstream>
#include <map>
#include <system_error>

#include <unistd.h>

namespace hallwright {

namespace {

void AppendNumber(std::string& s, double v) {
    char buf[40];
    std::snprintf(buf, sizeof buf, "%.17g", v);
    s += buf;
}

/* A CSV field, quoted (RFC 4180) only when it needs to be. */
std::string CsvField(const std::string& v) {
    if (v.find_first_of(",\"\n\r") == std::string::npos) return v;
    std::string q = "\"";
    for (char ch : v) {
        if (ch == '"') q += '"';
        q += ch;
    }
    return q + "\"";
}

}  // namespace

std::string PathsCsvFileName(const Scene& scene, int source, int receiver) {
    return SafeFileComponent(scene.sources.at(source).name) + "__" + SafeFileComponent(scene.receivers.at(receiver).name) + ".csv";
}

std::string FormatPathsCsv(const Scene& scene, const Geometry& geometry, const ReceiverPaths& paths) {
    std::string s = "order,delay_s";
    for (int b = 0; b < kBandCount; ++b) s += ",e" + std::to_string(kNominalBandHz[b]);
    s += ",dir_x,dir_y,dir_z,faces,groups\n";
    const auto& faces = geometry.Faces();
    const auto& groupNames = geometry.GetMesh().groupNames;
    for (const SpecularPath& p : paths.paths) {
        s += std::to_string(p.order);
        s += ',';
        AppendNumber(s, p.delayS);
        for (int b = 0; b < kBandCount; ++b) {
            s += ',';
            AppendNumber(s, p.energy[b]);
        }
        const Vec3 d = scene.DirectionToModel(p.arrivalFrom);
        for (int k = 0; k < 3; ++k) {
            s += ',';
            AppendNumber(s, d[k]);
        }
        std::string faceList, groupList;
        for (size_t i = 0; i < p.faces.size(); ++i) {
            const int f = p.faces[i];
            if (i) faceList += ';';
            faceList += std::to_string(f);
            const int g = (f >= 0 && f < static_cast<int>(faces.size())) ? faces[f].group : -1;
            if (i) groupList += ';';
            groupList += (g >= 0 && g < static_cast<int>(groupNames.size())) ? groupNames[g] : std::string("?");
        }
        s += ',' + CsvField(faceList) + ',' + CsvField(groupList) + '\n';
    }
    return s;
}

bool WritePathsCsv(const std::string& dir, const Scene& scene, const Geometry& geometry, int sourceIndex,
                   const std::vector<ReceiverPaths>& receiverPaths, Diagnostics& diag) {
    namespace fs = std::filesystem;
    const fs::path folder = fs::path(dir) / "paths";
    std::error_code ec;
    fs::create_directories(folder, ec);
    if (ec) {
        diag.Error(SourceLoc{folder.string(), 0, 0, ""},
                   "cannot create the folder: " + ec.message() + " (is the output directory writable?)");
        return false;
    }
    // Two seats whose names differ only in replaced characters would overwrite each other.
    std::map<std::string, int> owner;
    for (const ReceiverPaths& rp : receiverPaths) {
        if (rp.receiver < 0 || rp.receiver >= static_cast<int>(scene.receivers.size())) continue;
        auto [it, inserted] = owner.emplace(PathsCsvFileName(scene, sourceIndex, rp.receiver), rp.receiver);
        if (!inserted && it->second != rp.receiver) {
            diag.Error(scene.receivers[rp.receiver].definedAt,
                       "receivers \"" + scene.receivers[it->second].name + "\" and \"" +
                           scene.receivers[rp.receiver].name + "\" would both be written to paths/" + it->first +
                           "; give them names that differ in letters or digits");
            return false;
        }
    }
    for (const ReceiverPaths& rp : receiverPaths) {
        if (rp.source != sourceIndex || rp.receiver < 0 || rp.receiver >= static_cast<int>(scene.receivers.size())) {
            diag.Error(SourceLoc{folder.string(), 0, 0, ""},
                       "internal: paths of source " + std::to_string(rp.source) + ", receiver " +
                           std::to_string(rp.receiver) + " handed to the writer of source " +
                           std::to_string(sourceIndex));
            return false;
        }
        const fs::path target = folder / PathsCsvFileName(scene, sourceIndex, rp.receiver);
        std::string tmpName = ".";
        tmpName += target.filename().string();
        tmpName += ".tmp";
        tmpName += std::to_string(::getpid());
        const fs::path tmp = folder / tmpName;
        const std::string text = FormatPathsCsv(scene, geometry, rp);
        {
            std::ofstream out(tmp, std::ios::binary | std::ios::trunc);
            out.write(text.data(), static_cast<std::streamsize>(text.size()));
            out.close();
            if (!out) {
                fs::remove(tmp, ec);
                diag.Error(SourceLoc{target.string(), 0, 0, ""}, "cannot write the file (disk full or not writable?)");
                return false;
            }
        }
        fs::rename(tmp, target, ec);
        if (ec) {
            const std::string why = ec.message();
            fs::remove(tmp, ec);
            diag.Error(SourceLoc{target.string(), 0, 0, ""}, "cannot rename the finished file into place: " + why);
            return false;
        }
    }
    return true;
}

}  // namespace hallwright
