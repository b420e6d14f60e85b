// Impulse-response WAV files and their JSON sidecars.
#include "hallwright/ir_writer.h"

#include <filesystem>
#include <system_error>

#include <nlohmann/json.hpp>

#include "hallwright/run_tables.h"

namespace hallwright {

namespace {

// "+ 0.0" turns the -0 of a rotated axis (scene_frame.cpp) into 0 in the text.
nlohmann::ordered_json VecJson(const Vec3& v) {
    return nlohmann::ordered_json::array({v.x() + 0.0, v.y() + 0.0, v.z() + 0.0});
}

}  // namespace

std::string SafeFileComponent(const std::string& name) {
    std::string out;
    out.reserve(name.size());
    for (unsigned char ch : name) {
        const bool keep = (ch >= 'a' && ch <= 'z') || (ch >= 'A' && ch <= 'Z') ||
                          (ch >= '0' && ch <= '9') || ch == '.' || ch == '-' || ch == '_';
        out.push_back(keep ? static_cast<char>(ch) : '_');
    }
    if (out.empty() || out == "." || out == "..") out = "_" + out;
    return out;
}

std::string LayoutDirectory(const std::string& layout) {
    if (layout == "ambix-acn-sn3d") return "ambix";
    if (layout == "binaural-lr") return "binaural";
    return "mono";
}

std::string ImpulseResponseRelativePath(const std::string& layout, const std::string& source,
                                        const std::string& seat) {
    return "ir/" + LayoutDirectory(layout) + "/" + SafeFileComponent(source) + "__" +
           SafeFileComponent(seat) + ".wav";
}

std::string ImpulseResponseSidecarJson(const ImpulseResponse& ir, const IrFileInfo& info,
                                       WavFormat format) {
    nlohmann::ordered_json j;
    j["format"] = "hallwright-ir-sidecar";
    j["version"] = 1;
    j["channel_layout"] = ir.layout;
    j["channels"] = ir.channels;
    j["sample_rate"] = ir.sampleRate;
    j["sample_format"] = format == WavFormat::kFloat32 ? "float32" : "pcm24";
    j["frames"] = ir.FrameCount();
    // G needs an omnidirectional response; a binaural file's level follows its HRTF set.
    if (ir.layout == "binaural-lr") {
        j["reference_energy_note"] = "none: G is not defined for a binaural file, whose level follows "
                                     "the normalisation of its HRTF set";
    } else {
        j["reference_energy"] = ir.referenceEnergy;
        j["reference_energy_definition"] = GReferenceDefinition();
    }
    nlohmann::ordered_json eps = nlohmann::ordered_json::array(), hz = nlohmann::ordered_json::array();
    for (int b = 0; b < kBandCount; ++b) {
        eps.push_back(ir.bandEnergyOfUnitDirac[b]);
        hz.push_back(kNominalBandHz[b]);
    }
    j["synthesis_band_energy_of_unit_dirac"] = eps;
    j["bands_hz"] = hz;
    j["time_zero"] = "sample 0 is the emission time at the source";
    j["direct_delay_s"] = ir.directDelayS;
    j["seed"] = info.seed;
    j["frame"] = info.frame;
    j["source"] = {{"name", info.sourceName}, {"position", VecJson(info.sourcePosition)}};
    j["seat"] = {{"name", info.seatName},
                 {"position", VecJson(info.seatPosition)},
                 {"zone", info.zone},
                 {"facing", VecJson(info.facing)}};
    j["source_direction"] = VecJson(info.sourceDirection);
    j["up"] = VecJson(info.up);
    return j.dump(2) + "\n";
}

std::optional<std::string> WriteImpulseResponseFiles(const std::string& outDir,
                                                     const ImpulseResponse& ir,
                                                     const IrFileInfo& info, WavFormat format,
                                                     Diagnostics& diag) {
    namespace fs = std::filesystem;
    const std::string rel = ImpulseResponseRelativePath(ir.layout, info.sourceName, info.seatName);
    const fs::path wavPath = fs::path(outDir) / rel;
    std::error_code ec;
    fs::create_directories(wavPath.parent_path(), ec);
    if (ec) {
        diag.Error({wavPath.parent_path().string(), 0, 0, ""},
                   "cannot create the directory: " + ec.message() + " (is the output directory writable?)");
        return std::nullopt;
    }
    if (ir.samples.empty() || ir.channels < 1) {
        diag.Error({wavPath.string(), 0, 0, ""}, "no impulse response to write (synthesis failed)");
        return std::nullopt;
    }
    WavData wav;
    wav.sampleRate = ir.sampleRate;
    wav.channels = ir.channels;
    wav.samples = ir.samples;
    if (!WriteWav(wavPath.string(), wav, format, diag)) return std::nullopt;
    if (!WriteTextFileAtomic(wavPath.string() + ".json", ImpulseResponseSidecarJson(ir, info, format), diag))
        return std::nullopt;
    return rel;
}

}  // namespace hallwright
