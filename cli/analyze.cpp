// `hallwright analyze FILE.wav`: ISO 3382-1 parameters (and STI, IACC) of a predicted or
// measured impulse response, as a table on stdout and optionally the long-form CSV.
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <map>
#include <sstream>

#include "command.h"
#include "hallwright/bands.h"
#include "hallwright/ir_sidecar.h"
#include "hallwright/metrics.h"
#include "hallwright/parameters_csv.h"
#include "hallwright/wav.h"
#include "hallwright/wav_metrics.h"

namespace {

namespace hw = hallwright;

struct AnalyzeArgs {
    std::string file, csv, channels, bands, noise;
    double sourceAzimuth = 0;
    double referenceEnergy = 0;
    double speechLevel = 0;
    bool haveAzimuth = false, haveReference = false, haveSpeech = false, timeReversed = false;
};

/* "125,250,500" or "125-4000" -> band indices; false with a message on error. */
bool ParseBands(const std::string& text, std::vector<int>& out, std::string& error) {
    out.clear();
    auto index = [&](const std::string& s) -> int {
        try {
            size_t used = 0;
            const int hz = std::stoi(s, &used);
            if (used != s.size()) return -1;
            auto b = hw::BandIndexOfNominal(hz);
            return b ? *b : -1;
        } catch (...) {
            return -1;
        }
    };
    const size_t dash = text.find('-');
    if (dash != std::string::npos) {
        const int a = index(text.substr(0, dash)), b = index(text.substr(dash + 1));
        if (a < 0 || b < 0 || b < a) {
            error = "--bands " + text + ": expected a range of nominal octaves such as 125-4000";
            return false;
        }
        for (int i = a; i <= b; ++i) out.push_back(i);
        return true;
    }
    std::stringstream ss(text);
    std::string item;
    while (std::getline(ss, item, ',')) {
        const int b = index(item);
        if (b < 0) {
            error = "--bands: \"" + item + "\" is not a nominal octave (63, 125, ..., 8000)";
            return false;
        }
        out.push_back(b);
    }
    if (out.empty()) {
        error = "--bands is empty";
        return false;
    }
    return true;
}

std::string Cell(const hw::ParameterValue* v) {
    if (!v) return "";
    if (!v->value) return "-";
    char buf[32];
    const double x = *v->value;
    if (v->unit == "s") std::snprintf(buf, sizeof buf, "%.2f", x);
    else if (v->unit == "ms") std::snprintf(buf, sizeof buf, "%.0f", x);
    else if (v->unit == "dB" || v->unit == "%") std::snprintf(buf, sizeof buf, "%.1f", x);
    else std::snprintf(buf, sizeof buf, "%.3f", x);
    return buf;
}

void PrintTable(const hw::ParameterTable& t, const std::vector<int>& bands) {
    std::vector<std::string> order;
    std::map<std::string, std::string> units;
    for (const auto& v : t.values)
        if (v.band != 0 && !units.count(v.parameter)) order.push_back(v.parameter), units[v.parameter] = v.unit;
    std::printf("%-10s %-5s", "parameter", "unit");
    for (int b : bands) std::printf(" %7d", hw::kNominalBandHz[b]);
    std::printf("\n");
    for (const std::string& p : order) {
        if (p == "MTI" && !t.Find("MTI", hw::kNominalBandHz[bands[0]])) continue;
        std::printf("%-10s %-5s", p.c_str(), units[p].c_str());
        for (int b : bands) std::printf(" %7s", Cell(t.Find(p, hw::kNominalBandHz[b])).c_str());
        std::printf("\n");
    }
    bool header = false;
    for (const auto& v : t.values) {
        if (v.band != 0) continue;
        if (!header) std::printf("\nsingle numbers (ISO 3382-1 Annex A; STI IEC 60268-16):\n"), header = true;
        std::printf("  %-8s %8s %-5s%s%s\n", v.parameter.c_str(), Cell(&v).c_str(), v.unit.c_str(),
                    v.note.empty() ? "" : "  ", v.note.c_str());
    }
    // Reasons for empty cells, one line per distinct note.
    std::map<std::string, std::vector<std::string>> reasons;
    for (const auto& v : t.values)
        if (v.band != 0 && !v.value && !v.note.empty())
            reasons[v.note].push_back(v.parameter + "@" + std::to_string(v.band));
    if (!reasons.empty()) std::printf("\nnot computed:\n");
    for (const auto& [note, where] : reasons) {
        std::string list;
        for (size_t i = 0; i < where.size() && i < 6; ++i) list += (i ? " " : "") + where[i];
        if (where.size() > 6) list += " ...";
        std::printf("  %s: %s\n", list.c_str(), note.c_str());
    }
    for (const auto& n : t.notes) std::printf("note: %s\n", n.c_str());
}

const bool kRegistered = hwcli::AddCommand(
    "analyze",
    "Room-acoustic parameters of an impulse response (WAV)\n"
    "Example: hallwright analyze out/ir/mono/S1__A12.wav --csv a12.csv\n"
    "         hallwright analyze hall.wav --channels ambix --source-azimuth 0 --bands 125-4000",
    [](CLI::App* sub) {
        auto a = std::make_shared<AnalyzeArgs>();
        sub->add_option("file", a->file, "impulse response (WAV or any libsndfile format)")->required();
        sub->add_option("--bands", a->bands, "octaves to report: list (125,250,500) or range (125-4000); default 125-4000");
        sub->add_option("--csv", a->csv, "write the long-form CSV (source,receiver,zone,band,parameter,...) here");
        sub->add_option("--channels", a->channels, "channel layout: mono, ambix (ACN/SN3D; LF from W and Y) or "
                                                   "binaural (IACC); default from the sidecar, else mono")
            ->check(CLI::IsMember({"mono", "ambix", "binaural"}));
        sub->add_option("--source-azimuth", a->sourceAzimuth,
                        "source azimuth in degrees, counter-clockwise from straight ahead (AmbiX LF); "
                        "default from the sidecar, else 0");
        sub->add_option("--reference-energy", a->referenceEnergy,
                        "sum of p^2 of the free-field response at 10 m (for G); default from the sidecar")
            ->check(CLI::PositiveNumber);
        sub->add_option("--speech-level", a->speechLevel, "A-weighted speech level at 1 m, dB (STI level terms)");
        sub->add_option("--noise-octaves", a->noise, "background noise at the seat, 8 octave levels 63..8k dB, comma-separated");
        sub->add_flag("--time-reversed", a->timeReversed, "filter time-reversed (ISO 3382, for short decays)");
        return [a, sub] {
            a->haveAzimuth = sub->count("--source-azimuth") > 0;
            a->haveReference = sub->count("--reference-energy") > 0;
            a->haveSpeech = sub->count("--speech-level") > 0;
            hw::WavMetricsOptions opt;
            if (!a->bands.empty()) {
                std::string err;
                if (!ParseBands(a->bands, opt.bands, err)) {
                    std::fprintf(stderr, "hallwright analyze: error: %s\n", err.c_str());
                    return hwcli::kExitBadCommandLine;
                }
            }
            if (!a->noise.empty()) {
                std::stringstream ss(a->noise);
                std::string item;
                std::vector<double> v;
                try {
                    while (std::getline(ss, item, ',')) v.push_back(std::stod(item));
                } catch (...) {
                    v.clear();
                }
                if (v.size() != hw::kBandCount) {
                    std::fprintf(stderr, "hallwright analyze: error: --noise-octaves needs 8 numbers (63 Hz ... 8 kHz)\n");
                    return hwcli::kExitBadCommandLine;
                }
                hw::Bands n;
                for (int b = 0; b < hw::kBandCount; ++b) n[b] = v[b];
                opt.speech.noiseOctaveDb = n;
            }
            if (a->haveSpeech) opt.speech.speechLevelDbA = a->speechLevel;
            opt.timeReversedFilter = a->timeReversed;

            hw::Diagnostics diag;
            auto wav = hw::ReadWav(a->file, diag);
            if (!wav) return hwcli::Report(diag);
            auto sidecar = hw::ReadIrSidecar(a->file, diag);
            if (diag.HasErrors()) return hwcli::Report(diag);
            opt.layout = hw::ChannelLayout::kMono;
            if (sidecar && sidecar->layout) opt.layout = *sidecar->layout;
            if (a->channels == "mono") opt.layout = hw::ChannelLayout::kMono;
            if (a->channels == "ambix") opt.layout = hw::ChannelLayout::kAmbix;
            if (a->channels == "binaural") opt.layout = hw::ChannelLayout::kBinaural;
            if (sidecar && sidecar->sourceAzimuthDeg) opt.sourceAzimuthDeg = *sidecar->sourceAzimuthDeg;
            if (a->haveAzimuth) opt.sourceAzimuthDeg = a->sourceAzimuth;
            // A binaural file's level follows the HRTF set's normalisation (response.h), so its
            // sidecar's reference energy does not define G, whatever layout it is analysed as.
            const bool binauralFile = sidecar && sidecar->layout == hw::ChannelLayout::kBinaural;
            if (sidecar && sidecar->referenceEnergy && !binauralFile) opt.referenceEnergy = sidecar->referenceEnergy;
            if (a->haveReference) opt.referenceEnergy = a->referenceEnergy;
            if (a->haveReference && opt.layout == hw::ChannelLayout::kBinaural) {
                std::fprintf(stderr, "hallwright analyze: error: --reference-energy: a binaural analysis gives IACC "
                                     "only, no G; to force G from the left ear, add --channels mono\n");
                return hwcli::kExitBadCommandLine;
            }

            hw::Diagnostics analysis;
            hw::ParameterTable table = hw::ParametersFromWav(*wav, opt, analysis);
            for (const auto& d : analysis.Items()) {  // the engine does not know the file name
                hw::SourceLoc at = d.at;
                if (at.file.empty()) at.file = a->file;
                diag.Add(d.severity, at, d.message);
            }
            if (diag.HasErrors()) return hwcli::Report(diag);
            if (sidecar && !sidecar->azimuthNote.empty() && opt.layout == hw::ChannelLayout::kAmbix && !a->haveAzimuth)
                table.notes.push_back("source azimuth from the sidecar: " + sidecar->azimuthNote);

            const char* layoutName = opt.layout == hw::ChannelLayout::kAmbix      ? "ambix"
                                     : opt.layout == hw::ChannelLayout::kBinaural ? "binaural"
                                                                                 : "mono";
            std::printf("%s: %d Hz, %d channel(s), %.3f s, layout %s, time zero %.2f ms%s\n", a->file.c_str(),
                        wav->sampleRate, wav->channels, double(wav->FrameCount()) / wav->sampleRate, layoutName,
                        table.timeZeroS * 1000, sidecar ? ", sidecar read" : "");
            if (!opt.referenceEnergy) {
                const char* why =
                    opt.layout == hw::ChannelLayout::kBinaural
                        ? "a binaural analysis gives IACC only (a binaural file's level follows its HRTF set)"
                    : binauralFile ? "a binaural file's level follows its HRTF set (give --reference-energy to force it)"
                    : sidecar      ? "the sidecar has no reference energy and no --reference-energy was given"
                                   : "no sidecar and no --reference-energy";
                std::printf("G not computed: %s\n", why);
            } else if (binauralFile) {
                table.notes.push_back("G of the left ear with the given --reference-energy: its level follows the "
                                      "HRTF set, not an omnidirectional reference");
            }
            std::printf("\n");
            PrintTable(table, opt.bands);

            if (!a->csv.empty()) {
                const std::string stem = std::filesystem::path(a->file).stem().string();
                const std::string source = sidecar && !sidecar->sourceName.empty() ? sidecar->sourceName : "";
                const std::string receiver = sidecar && !sidecar->seatName.empty() ? sidecar->seatName : stem;
                const std::string zone = sidecar ? sidecar->zone : "";
                if (!hw::WriteParametersCsv(a->csv, hw::ToRows(table, source, receiver, zone), diag)) {
                    hwcli::Report(diag);
                    return hwcli::kExitRunFailure;
                }
                std::printf("\nwrote %s\n", a->csv.c_str());
            }
            hwcli::Report(diag);  // warnings, if any
            return hwcli::kExitOk;
        };
    });

}  // namespace
