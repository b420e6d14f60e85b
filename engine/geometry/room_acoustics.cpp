#include "hallwright/room_acoustics.h"

#include <cmath>
#include <limits>

#include "hallwright/air.h"

namespace hallwright {

double SabineT(double volume, double absorptionArea, double airM, double c) {
    const double K = 24.0 * std::log(10.0) / c;
    return K * volume / (absorptionArea + 4.0 * airM * volume);
}

double EyringT(double volume, double surfaceArea, double meanAlpha, double airM, double c) {
    const double K = 24.0 * std::log(10.0) / c;
    if (meanAlpha >= 1.0) return 0.0;
    return K * volume / (-surfaceArea * std::log(1.0 - meanAlpha) + 4.0 * airM * volume);
}

RoomEstimates EstimateRoom(const Scene& scene, const Geometry& geometry) {
    RoomEstimates e;
    e.volumeM3 = geometry.Volume();
    e.surfaceAreaM2 = geometry.SurfaceArea();
    e.meanFreePathM = e.surfaceAreaM2 > 0 ? 4.0 * e.volumeM3 / e.surfaceAreaM2 : 0.0;
    const auto& area = geometry.AreaPerMaterial();
    for (size_t m = 0; m < area.size() && m < scene.materials.size(); ++m)
        e.absorptionAreaM2 += area[m] * scene.materials[m].absorption;
    e.meanAbsorption = e.absorptionAreaM2 / e.surfaceAreaM2;
    e.airM = AirEnergyAttenuationPerM(scene.air);
    const double c = SpeedOfSound(scene.air.temperatureC);
    for (int b = 0; b < kBandCount; ++b) {
        e.sabineS[b] = SabineT(e.volumeM3, e.absorptionAreaM2[b], e.airM[b], c);
        e.eyringS[b] = EyringT(e.volumeM3, e.surfaceAreaM2, e.meanAbsorption[b], e.airM[b], c);
        e.schroederHz[b] = e.volumeM3 > 0 ? 2000.0 * std::sqrt(e.eyringS[b] / e.volumeM3) : 0.0;
    }
    return e;
}

}  // namespace hallwright
