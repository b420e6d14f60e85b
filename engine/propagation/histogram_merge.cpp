#include "hallwright/propagation.h"

namespace hallwright {

namespace {
void WeightedMean(std::vector<float>& total, const std::vector<float>& round, double wTotal, double wRound) {
    for (size_t i = 0; i < total.size(); ++i)
        total[i] = static_cast<float>(wTotal * total[i] + wRound * round[i]);
}
}  // namespace

bool MergeTracerRound(ReceiverHistogram& total, int64_t totalRays, const ReceiverHistogram& round,
                      int64_t roundRays) {
    if (total.binCount != round.binCount || total.energy.size() != round.energy.size() ||
        total.lateralSq.size() != round.lateralSq.size() || total.lateralAbs.size() != round.lateralAbs.size() ||
        total.directionEnergy.size() != round.directionEnergy.size() || totalRays + roundRays <= 0)
        return false;
    const double n = static_cast<double>(totalRays + roundRays);
    const double wTotal = totalRays / n, wRound = roundRays / n;
    WeightedMean(total.energy, round.energy, wTotal, wRound);
    WeightedMean(total.lateralSq, round.lateralSq, wTotal, wRound);
    WeightedMean(total.lateralAbs, round.lateralAbs, wTotal, wRound);
    WeightedMean(total.directionEnergy, round.directionEnergy, wTotal, wRound);
    return true;
}

}  // namespace hallwright
