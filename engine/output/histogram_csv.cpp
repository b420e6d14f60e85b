// Tracer histograms as CSV (see histogram_csv.h).
#include "hallwright/ir_writer.h"
#include "hallwright/histogram_csv.h"

#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <system_error>

namespace hallwright {
namespace {

SourceLoc FileLoc(const std::string& file) {
    SourceLoc at;
    at.file = file;
    return at;
}

}  // namespace

std::string HistogramCsvFileName(const Scene& scene, int source, int receiver) {
    return SafeFileComponent(scene.sources.at(source).name) + "__" + SafeFileComponent(scene.receivers.at(receiver).name) + ".csv";
}

std::string FormatHistogramCsv(const ReceiverHistogram& hist, const ReceiverPaths* paths) {
    const int n = hist.binCount;
    std::vector<double> tracer(static_cast<size_t>(n) * kBandCount, 0.0);
    for (int k = 0; k < kBatchCount; ++k)
        for (int i = 0; i < n; ++i)
            for (int b = 0; b < kBandCount; ++b) tracer[static_cast<size_t>(i) * kBandCount + b] += hist.Energy(k, i, b);
    for (double& v : tracer) v /= kBatchCount;
    std::vector<double> sum = tracer;
    if (paths)
        for (const SpecularPath& p : paths->paths) {
            const double bin = std::floor(p.delayS / kBinWidthS);
            if (bin < 0 || bin >= n) continue;
            for (int b = 0; b < kBandCount; ++b) sum[static_cast<size_t>(bin) * kBandCount + b] += p.energy[b];
        }
    std::string out = "time_s";
    for (int b = 0; b < kBandCount; ++b) out += ",tracer_" + std::to_string(kNominalBandHz[b]);
    for (int b = 0; b < kBandCount; ++b) out += ",sum_" + std::to_string(kNominalBandHz[b]);
    out += "\n";
    char buf[40];
    for (int i = 0; i < n; ++i) {
        std::snprintf(buf, sizeof buf, "%.3f", i * kBinWidthS);
        out += buf;
        for (const auto* col : {&tracer, &sum})
            for (int b = 0; b < kBandCount; ++b) {
                std::snprintf(buf, sizeof buf, ",%.9g", (*col)[static_cast<size_t>(i) * kBandCount + b]);
                out += buf;
            }
        out += "\n";
    }
    return out;
}

bool WriteHistogramCsv(const std::string& dir, const Scene& scene, const std::vector<ReceiverHistogram>& histograms,
                       const std::vector<ReceiverPaths>* paths, Diagnostics& diag) {
    namespace fs = std::filesystem;
    const fs::path folder = fs::path(dir) / "histograms";
    std::error_code ec;
    fs::create_directories(folder, ec);
    if (ec) {
        diag.Error(FileLoc(folder.string()), "cannot create the folder: " + ec.message() +
                                                 "; check the --out path and its permissions");
        return false;
    }
    for (const ReceiverHistogram& h : histograms) {
        const ReceiverPaths* match = nullptr;
        if (paths)
            for (const ReceiverPaths& rp : *paths)
                if (rp.source == h.source && rp.receiver == h.receiver) match = &rp;
        const fs::path file = folder / HistogramCsvFileName(scene, h.source, h.receiver);
        const fs::path tmp = file.string() + ".tmp";
        {
            std::ofstream os(tmp, std::ios::binary | std::ios::trunc);
            if (os) os << FormatHistogramCsv(h, match);
            if (!os) {
                diag.Error(FileLoc(tmp.string()), "cannot write the histogram file; check free disk space and "
                                                  "permissions");
                fs::remove(tmp, ec);
                return false;
            }
        }
        fs::rename(tmp, file, ec);
        if (ec) {
            diag.Error(FileLoc(file.string()), "cannot rename the finished file into place: " + ec.message());
            fs::remove(tmp, ec);
            return false;
        }
    }
    return true;
}

}  // namespace hallwright
