// `hallwright auralize IR.wav DRY.wav OUT.wav`: a dry recording heard through an impulse
// response (mono, binaural or AmbiX), normalised unless the calibrated level is asked for.
#include <cstdio>
#include <filesystem>
#include <memory>
#include <string>

#include "command.h"
#include "hallwright/auralize.h"
#include "hallwright/ir_sidecar.h"
#include "hallwright/wav.h"
#include "hallwright/wav_metrics.h"

namespace {

namespace hw = hallwright;
namespace fs = std::filesystem;

struct AuralizeArgs {
    std::string ir, dry, out, format = "float32";
    double peakDbfs = -1.0;
    bool keepCalibration = false;
};

/* The layout of the IR: from its sidecar when that agrees with the file, else guessed from
   the channel count (and said to be a guess). */
std::string LayoutText(const hw::WavData& ir, const std::optional<hw::IrSidecar>& sidecar) {
    if (sidecar && sidecar->layout) {
        const hw::ChannelLayout l = *sidecar->layout;
        if (l == hw::ChannelLayout::kMono && ir.channels == 1) return "mono (from the sidecar)";
        if (l == hw::ChannelLayout::kBinaural && ir.channels == 2) return "binaural, left then right (from the sidecar)";
        if (l == hw::ChannelLayout::kAmbix && ir.channels == 4)
            return "first-order AmbiX, ACN order W Y Z X, SN3D (from the sidecar)";
    }
    if (ir.channels == 1) return "mono";
    if (ir.channels == 2) return "2 channels (no sidecar: binaural left/right if hallwright wrote it)";
    if (ir.channels == 4) return "4 channels (no sidecar: AmbiX ACN/SN3D if hallwright wrote it)";
    return std::to_string(ir.channels) + " channels";
}

/* How to listen to the output, by layout. */
const char* ListeningHint(const hw::WavData& ir, const std::optional<hw::IrSidecar>& sidecar) {
    const bool known = sidecar && sidecar->layout;
    if (ir.channels == 2 && (!known || *sidecar->layout == hw::ChannelLayout::kBinaural))
        return "binaural: listen on headphones (left channel to the left ear)";
    if (ir.channels == 4 && (!known || *sidecar->layout == hw::ChannelLayout::kAmbix))
        return "AmbiX: play through a first-order Ambisonic decoder (ACN/SN3D) for your loudspeakers or headphones";
    if (ir.channels == 1) return "mono: one loudspeaker or both headphone sides";
    return nullptr;
}

/* True when `a` and `b` name the same existing file, or the same path when `a` does not exist. */
bool SamePath(const std::string& a, const std::string& b) {
    std::error_code ec;
    if (fs::exists(a, ec) && fs::exists(b, ec)) return fs::equivalent(a, b, ec);
    return fs::weakly_canonical(a, ec) == fs::weakly_canonical(b, ec);
}

int Run(const AuralizeArgs& a) {
    hw::Diagnostics diag;
    if (SamePath(a.out, a.ir) || SamePath(a.out, a.dry)) {
        diag.Error({a.out, 0, 0, ""}, "the output would overwrite an input: give OUT.wav another name");
        return hwcli::Report(diag);
    }
    auto ir = hw::ReadWav(a.ir, diag);
    if (!ir) {
        diag.Note({a.ir, 0, 0, ""}, "the first argument is the impulse response, e.g. RUN/ir/binaural/<source>__<seat>.wav");
        return hwcli::Report(diag);
    }
    // The sidecar only names the layout here: a broken one is a warning, not a stop.
    hw::Diagnostics sidecarDiag;
    auto sidecar = hw::ReadIrSidecar(a.ir, sidecarDiag);
    for (const hw::Diagnostic& d : sidecarDiag.Items())
        diag.Warning(d.at, d.message + " (ignored: the layout is taken from the channel count)");
    if (sidecarDiag.HasErrors()) sidecar.reset();
    auto dry = hw::ReadWav(a.dry, diag);
    if (!dry) {
        diag.Note({a.dry, 0, 0, ""}, "the second argument is the dry (anechoic) recording, a mono or stereo audio file");
        return hwcli::Report(diag);
    }

    hw::AuralizeOptions opt;
    opt.keepCalibration = a.keepCalibration;
    opt.peakDbfs = a.peakDbfs;
    opt.irPath = a.ir;
    opt.dryPath = a.dry;
    const hw::AuralizeResult r = hw::Auralize(*dry, *ir, opt, diag);
    if (!r.ok) return hwcli::Report(diag);
    const hw::WavFormat format = a.format == "pcm24" ? hw::WavFormat::kPcm24 : hw::WavFormat::kFloat32;
    if (!hw::WriteWav(a.out, r.output, format, diag)) {
        hwcli::Report(diag);
        return hwcli::kExitRunFailure;
    }

    // What went in, what was done, what came out.
    const std::string layout = LayoutText(*ir, sidecar);
    std::printf("impulse response: %s: %s, %d Hz, %.3f s\n", a.ir.c_str(), layout.c_str(), ir->sampleRate,
                double(ir->FrameCount()) / ir->sampleRate);
    if (sidecar && !sidecar->seatName.empty())
        std::printf("  seat %s%s%s, source %s\n", sidecar->seatName.c_str(), sidecar->zone.empty() ? "" : " in zone ",
                    sidecar->zone.c_str(), sidecar->sourceName.empty() ? "?" : sidecar->sourceName.c_str());
    std::printf("dry recording:    %s: %d channel(s), %d Hz, %.3f s\n", a.dry.c_str(), dry->channels, dry->sampleRate,
                double(dry->FrameCount()) / dry->sampleRate);
    std::printf("resampling:       %s\n",
                r.resampled ? ("dry recording " + std::to_string(r.dryRateIn) + " Hz -> " +
                               std::to_string(r.output.sampleRate) + " Hz (libsoxr, high quality; the IR is not resampled)")
                                  .c_str()
                            : "none (the rates match)");
    if (r.downmixed) std::printf("downmix:          stereo -> mono, (L + R) / 2: an impulse response describes one point source\n");
    std::printf("output:           %s: %d channel(s) in the IR's layout, %d Hz, %.3f s, %s\n", a.out.c_str(),
                r.output.channels,
                r.output.sampleRate, double(r.output.FrameCount()) / r.output.sampleRate,
                format == hw::WavFormat::kPcm24 ? "24-bit PCM" : "32-bit float");
    if (a.keepCalibration)
        std::printf("level:            calibrated level kept (gain 0 dB), peak %.2f dBFS\n", r.peakDbfs);
    else
        std::printf("level:            normalised, gain %+.2f dB applied, peak %.2f dBFS\n", r.gainDb, r.peakDbfs);
    if (const char* hint = ListeningHint(*ir, sidecar)) std::printf("listening:        %s\n", hint);
    if (a.keepCalibration)
        std::printf("caution: start playback quietly and raise the volume slowly: the calibrated level was kept "
                    "and can be loud.\n");
    else
        std::printf("caution: start playback quietly and raise the volume slowly: the output is normalised to "
                    "%.1f dBFS, not calibrated (use --keep-calibration to keep the IR's level).\n",
                    a.peakDbfs);
    hwcli::Report(diag);  // warnings, if any
    return hwcli::kExitOk;
}

const bool kRegistered = hwcli::AddCommand(
    "auralize",
    "Hear a dry recording through an impulse response (mono, binaural or AmbiX)\n"
    "Example: hallwright auralize out/ir/binaural/S1__stalls-r05-s10.wav voice.wav stalls.wav\n"
    "The output is normalised to -1 dBFS unless --keep-calibration; start playback quietly.",
    [](CLI::App* sub) {
        auto a = std::make_shared<AuralizeArgs>();
        sub->add_option("ir", a->ir, "impulse response WAV (its .wav.json sidecar, when present, names the layout)")
            ->required();
        sub->add_option("dry", a->dry, "dry (anechoic) recording, mono or stereo; stereo is mixed to mono")->required();
        sub->add_option("out", a->out, "output WAV: the IR's channels and sample rate")->required();
        auto* keep = sub->add_flag("--keep-calibration", a->keepCalibration,
                                   "keep the convolution's level (refused if it would exceed full scale)");
        sub->add_option("--peak-dbfs", a->peakDbfs, "peak level of the normalised output, dBFS (default -1)")
            ->check(CLI::Range(-120.0, 0.0))
            ->excludes(keep);
        sub->add_option("--wav-format", a->format, "output sample format (default float32)")
            ->check(CLI::IsMember({"float32", "pcm24"}));
        return [a] { return Run(*a); };
    });

}  // namespace
