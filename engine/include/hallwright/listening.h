#pragma once
// Listening comparison: one dry recording rendered through several seats' impulse responses
// with ONE common gain, so the level differences between seats stay audible (a separately
// normalised file per seat would hide an under-balcony seat's loss of level).
#include <string>
#include <vector>

#include "hallwright/auralize.h"
#include "hallwright/diagnostics.h"
#include "hallwright/wav.h"

namespace hallwright {

struct ListeningSet {
    bool ok = false;
    std::vector<WavData> renders;  // one per IR, in order
    double gainDb = 0;             // the common gain applied to every convolution
    std::vector<double> peakDbfs;  // largest |sample| of each render (the loudest at peakDbfs)
    std::vector<std::string> notes;  // resampling / downmix notes of the first render
};

/* Auralizes `dry` through every IR (Auralize, auralize.h) and rescales all renders by the
   gain that brings the loudest of them to `peakDbfs`; the renders keep their relative levels
   exactly. Errors (bad inputs, an empty list) leave ok = false. */
ListeningSet RenderListeningSet(const WavData& dry, const std::vector<WavData>& irs, double peakDbfs,
                                Diagnostics& diag);

}  // namespace hallwright
