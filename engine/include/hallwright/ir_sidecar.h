#pragma once
// Reader of the sidecar `<file>.wav.json` written beside a predicted IR (keys documented in
// ir_writer.h): what `analyze` needs to compute G, pick the channel layout and name the rows.
// Unknown keys are ignored; a present but malformed sidecar is an error naming the file.
#include <optional>
#include <string>

#include "hallwright/diagnostics.h"
#include "hallwright/wav_metrics.h"

namespace hallwright {

struct IrSidecar {
    std::string path;                       // the .wav.json file read
    std::optional<double> referenceEnergy;  // "reference_energy"
    std::optional<ChannelLayout> layout;    // "channel_layout": mono | ambix-acn-sn3d | binaural-lr
    std::string sourceName, seatName, zone; // "source".name, "seat".name, "seat".zone
    /* Azimuth of the source seen from the seat, counter-clockwise from the facing direction,
       from "source_direction" and "seat".facing projected on the horizontal plane; the up
       axis is "up" when given (every sidecar of `simulate` has it), else the model axis (y or
       z) least present in both vectors, with azimuthNote saying so. A malformed "up" is an
       error. */
    std::optional<double> sourceAzimuthDeg;
    std::string azimuthNote;
};

/* Parses sidecar text; `path` only names it in errors. */
std::optional<IrSidecar> ParseIrSidecar(const std::string& text, const std::string& path, Diagnostics& diag);
/* Reads `<wavPath>.json` when it exists: nothing (and no error) when absent, nothing and an
   error when unreadable or malformed. */
std::optional<IrSidecar> ReadIrSidecar(const std::string& wavPath, Diagnostics& diag);

}  // namespace hallwright
