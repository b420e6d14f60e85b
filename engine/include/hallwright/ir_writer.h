#pragma once
// Impulse-response files: DIR/ir/<layout dir>/<source>__<seat>.wav (libsndfile via wav.h,
// 32-bit float by default, 24-bit PCM on request) and its sidecar <file>.wav.json, both written
// to a temporary name and renamed. One IR at a time: nothing here keeps IRs in memory.
//
// Sidecar keys (JSON object; readers must ignore keys they do not know):
//   "format": "hallwright-ir-sidecar", "version": 1,
//   "channel_layout": "mono" | "ambix-acn-sn3d" | "binaural-lr",  "channels": int,
//   "sample_rate": Hz, "sample_format": "float32" | "pcm24", "frames": int,
//   "reference_energy": number (response.h: sum_n p(n)^2 of the 10 m free-field response),
//   "reference_energy_definition": text  (both absent in binaural sidecars: G is not defined
//   for them, their level follows the HRTF set; "reference_energy_note" says so instead),
//   "synthesis_band_energy_of_unit_dirac": [8 numbers, 63 Hz .. 8 kHz],  "bands_hz": [8 ints],
//   "time_zero": text (sample 0 = emission at the source),  "direct_delay_s": number,
//   "seed": int,  "frame": "model" (positions in the scene's units and axes) or "internal",
//   "source": {"name": str, "position": [x, y, z]},
//   "seat": {"name": str, "position": [x, y, z], "zone": str, "facing": [x, y, z]},
//   "source_direction": [x, y, z]  (unit vector from the seat toward the source),
//   "up": [x, y, z]  (unit vector of the vertical, in the same frame as the vectors above)
#include <cstdint>
#include <optional>
#include <string>

#include "hallwright/diagnostics.h"
#include "hallwright/mesh.h"
#include "hallwright/response.h"
#include "hallwright/wav.h"

namespace hallwright {

/* What the sidecar says about the IR besides its samples. */
struct IrFileInfo {
    std::string sourceName;
    Vec3 sourcePosition = Vec3::Zero();
    std::string seatName;
    Vec3 seatPosition = Vec3::Zero();
    std::string zone;
    Vec3 facing = Vec3::UnitX();           // the listener's look direction (unit)
    Vec3 sourceDirection = Vec3::UnitX();  // from the seat toward the source (unit)
    Vec3 up = Vec3::UnitY();               // the vertical in `frame` (internal frame: +y)
    std::string frame = "model";           // frame of the positions and directions above
    uint64_t seed = 1;
};

/* A name safe in a file name: letters, digits, '.', '-' and '_' kept, anything else '_'. */
std::string SafeFileComponent(const std::string& name);
/* Directory under DIR/ir/ for a channel layout: "mono", "ambix" or "binaural". */
std::string LayoutDirectory(const std::string& layout);
/* "ir/<layout dir>/<source>__<seat>.wav", relative to the output directory. */
std::string ImpulseResponseRelativePath(const std::string& layout, const std::string& source,
                                        const std::string& seat);
/* The sidecar text (pretty JSON) for an IR. */
std::string ImpulseResponseSidecarJson(const ImpulseResponse& ir, const IrFileInfo& info,
                                       WavFormat format);
/* Writes the WAV and its sidecar under outDir (directories created); returns the WAV path
   relative to outDir, or nothing with an error naming the file. */
std::optional<std::string> WriteImpulseResponseFiles(const std::string& outDir,
                                                     const ImpulseResponse& ir,
                                                     const IrFileInfo& info, WavFormat format,
                                                     Diagnostics& diag);

}  // namespace hallwright
