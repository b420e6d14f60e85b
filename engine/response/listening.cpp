// One dry recording through several IRs with a common gain (listening.h).
#include "hallwright/listening.h"

#include <algorithm>
#include <cmath>
#include <optional>
#include <string>

namespace hallwright {

ListeningSet RenderListeningSet(const WavData& dry, const std::vector<WavData>& irs, double peakDbfs,
                                Diagnostics& diag) {
    ListeningSet set;
    if (irs.empty()) {
        diag.Error({}, "no impulse response to render the dry recording through");
        return set;
    }
    // Each render normalised on its own first; the smallest of those gains (the loudest
    // render) then serves all, so render i is scaled by 10^((gMin - g_i) / 20) <= 1.
    // The IRs of one run share a sample rate: the dry recording is resampled once, not per IR.
    std::optional<WavData> resampled;
    std::vector<std::string> notes;
    if (dry.sampleRate != irs[0].sampleRate && dry.sampleRate > 0) {
        resampled = ResampleTo(dry, irs[0].sampleRate, diag);
        if (!resampled) return set;
        notes.push_back("the dry recording was resampled from " + std::to_string(dry.sampleRate) + " to " +
                        std::to_string(irs[0].sampleRate) + " Hz (libsoxr)");
    }
    const WavData& input = resampled ? *resampled : dry;
    AuralizeOptions options;
    options.peakDbfs = peakDbfs;
    std::vector<AuralizeResult> results;
    for (const WavData& ir : irs) {
        AuralizeResult r = Auralize(input, ir, options, diag);
        if (!r.ok) return set;
        results.push_back(std::move(r));
    }
    double gainMin = results[0].gainDb;
    for (const auto& r : results) gainMin = std::min(gainMin, r.gainDb);
    for (auto& r : results) {
        const float scale = static_cast<float>(std::pow(10.0, (gainMin - r.gainDb) / 20.0));
        float peak = 0;
        for (float& s : r.output.samples) {
            s *= scale;
            peak = std::max(peak, std::fabs(s));
        }
        set.peakDbfs.push_back(peak > 0 ? 20.0 * std::log10(peak) : -300.0);
        set.renders.push_back(std::move(r.output));
    }
    set.gainDb = gainMin;
    set.notes = notes;
    set.notes.insert(set.notes.end(), results[0].notes.begin(), results[0].notes.end());
    set.ok = true;
    return set;
}

}  // namespace hallwright
