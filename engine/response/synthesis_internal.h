#pragma once
// Pieces of synthesis shared by the mono/AmbiX code and the binaural renderer.
#include <functional>
#include <vector>

#include "hallwright/response.h"

namespace hallwright {

/* Kernel of one path for one output channel (empty: the path is silent there) and an extra
   delay in seconds added to the path's own delay. */
using PathKernel = std::function<void(const SpecularPath&, std::vector<float>& kernel, double& extraDelayS)>;

/* Adds every path's band-shaped pulse at its exact (fractional) delay, convolved with its
   kernel, into `out` (nOut samples). */
void AddSpecularKernelPart(const ReceiverPaths& paths, const SynthesisContext& ctx, int nOut,
                           const PathKernel& kernelOf, std::vector<float>& out);

/* AmbiX synthesis with or without the specular part (the binaural renderer decodes the late
   part only). */
ImpulseResponse SynthesizeAmbixPart(const ReceiverPaths& specular, const ReceiverHistogram& tracer,
                                    const SynthesisContext& context, const Vec3& facing,
                                    bool includeSpecular, Diagnostics& diag);

}  // namespace hallwright
