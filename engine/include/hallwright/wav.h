#pragma once
// WAV files through libsndfile: interleaved float samples, written to a temporary name in the
// target directory and renamed, so a reader never sees a half-written file.
#include <optional>
#include <string>
#include <vector>

#include "hallwright/diagnostics.h"

namespace hallwright {

/* A whole audio file in memory: samples[frame * channels + channel], full scale = 1.0. */
struct WavData {
    int sampleRate = 48000;
    int channels = 1;
    std::vector<float> samples;  // interleaved

    size_t FrameCount() const { return channels > 0 ? samples.size() / channels : 0; }
    float At(size_t frame, int channel) const { return samples[frame * channels + channel]; }
};

enum class WavFormat { kFloat32, kPcm24 };

/* Writes `data` to `path` (temp file + rename); false and an error naming the file on failure.
   PCM24 clips at full scale (a warning says how many samples clipped). */
bool WriteWav(const std::string& path, const WavData& data, WavFormat fmt, Diagnostics& diag);

/* Reads any libsndfile-readable file into float samples; nothing and an error on failure. */
std::optional<WavData> ReadWav(const std::string& path, Diagnostics& diag);

}  // namespace hallwright
