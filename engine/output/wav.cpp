// WAV read/write via libsndfile (temporary name + rename on write).
#include "hallwright/wav.h"

#include <cmath>
#include <cstdio>
#include <filesystem>
#include <system_error>

#include <sndfile.h>
#include <unistd.h>

namespace hallwright {

namespace {

/* A temporary name beside the target, unique per process, so the rename stays on one disk. */
std::string TempNameBeside(const std::string& path) {
    namespace fs = std::filesystem;
    fs::path p(path);
    std::string name = ".";
    name += p.filename().string();
    name += ".tmp";
    name += std::to_string(::getpid());
    return (p.parent_path() / name).string();
}

}  // namespace

bool WriteWav(const std::string& path, const WavData& data, WavFormat fmt, Diagnostics& diag) {
    const SourceLoc at{path, 0, 0, ""};
    if (data.channels < 1 || data.sampleRate < 1) {
        diag.Error(at, "cannot write a WAV with " + std::to_string(data.channels) +
                           " channels at " + std::to_string(data.sampleRate) + " Hz");
        return false;
    }
    if (data.samples.size() % data.channels != 0) {
        diag.Error(at, "sample count is not a multiple of the channel count");
        return false;
    }
    // Non-finite samples would become garbage in the file: refuse them.
    size_t clipped = 0;
    for (float v : data.samples) {
        if (!std::isfinite(v)) {
            diag.Error(at, "refusing to write a non-finite sample (NaN or infinity)");
            return false;
        }
        if (std::fabs(v) > 1.0f) ++clipped;
    }

    SF_INFO info{};
    info.samplerate = data.sampleRate;
    info.channels = data.channels;
    info.format = SF_FORMAT_WAV | (fmt == WavFormat::kFloat32 ? SF_FORMAT_FLOAT : SF_FORMAT_PCM_24);
    const std::string tmp = TempNameBeside(path);
    SNDFILE* f = sf_open(tmp.c_str(), SFM_WRITE, &info);
    if (!f) {
        diag.Error(at, std::string("cannot create the file: ") + sf_strerror(nullptr) +
                           " (does the directory exist and is it writable?)");
        return false;
    }
    if (fmt == WavFormat::kPcm24) sf_command(f, SFC_SET_CLIPPING, nullptr, SF_TRUE);
    // No PEAK chunk: it carries a time stamp, which would make identical runs differ by bytes.
    sf_command(f, SFC_SET_ADD_PEAK_CHUNK, nullptr, SF_FALSE);
    const sf_count_t frames = static_cast<sf_count_t>(data.FrameCount());
    const sf_count_t written = sf_writef_float(f, data.samples.data(), frames);
    const int closeErr = sf_close(f);
    std::error_code ec;
    if (written != frames || closeErr != 0) {
        std::filesystem::remove(tmp, ec);
        diag.Error(at, "writing failed after " + std::to_string(written) + " of " +
                           std::to_string(frames) + " frames (disk full?)");
        return false;
    }
    std::filesystem::rename(tmp, path, ec);
    if (ec) {
        std::filesystem::remove(tmp, ec);
        diag.Error(at, "cannot rename the finished temporary file into place: " + ec.message());
        return false;
    }
    if (fmt == WavFormat::kPcm24 && clipped > 0)
        diag.Warning(at, std::to_string(clipped) +
                             " samples exceeded full scale and were clipped in 24-bit PCM; "
                             "use 32-bit float output to keep them");
    return true;
}

std::optional<WavData> ReadWav(const std::string& path, Diagnostics& diag) {
    const SourceLoc at{path, 0, 0, ""};
    std::error_code ec;
    if (!std::filesystem::exists(path, ec)) {
        diag.Error(at, "no such file");
        return std::nullopt;
    }
    SF_INFO info{};
    SNDFILE* f = sf_open(path.c_str(), SFM_READ, &info);
    if (!f) {
        diag.Error(at, std::string("not a readable audio file: ") + sf_strerror(nullptr));
        return std::nullopt;
    }
    if (info.channels < 1 || info.samplerate < 1 || info.frames < 0) {
        sf_close(f);
        diag.Error(at, "audio file has no channels or no sample rate");
        return std::nullopt;
    }
    // Integer files read back in [-1, 1); float files as stored.
    sf_command(f, SFC_SET_NORM_FLOAT, nullptr, SF_TRUE);
    WavData out;
    out.sampleRate = info.samplerate;
    out.channels = info.channels;
    out.samples.resize(static_cast<size_t>(info.frames) * info.channels);
    const sf_count_t got = sf_readf_float(f, out.samples.data(), info.frames);
    sf_close(f);
    if (got != info.frames) {
        diag.Error(at, "file is truncated: read " + std::to_string(got) + " of " +
                           std::to_string(info.frames) + " frames");
        return std::nullopt;
    }
    for (float v : out.samples) {
        if (!std::isfinite(v)) {
            diag.Error(at, "file contains non-finite samples (NaN or infinity)");
            return std::nullopt;
        }
    }
    return out;
}

}  // namespace hallwright
