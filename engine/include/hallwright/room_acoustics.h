#pragma once
// Statistical room acoustics of the whole room: Sabine and Eyring reverberation times with air
// absorption, mean free path and Schroeder frequency. Used by `inspect`, for the tracer's
// default duration and as a reference in the report.
#include "hallwright/bands.h"
#include "hallwright/geometry.h"
#include "hallwright/scene.h"

namespace hallwright {

struct RoomEstimates {
    double volumeM3 = 0;
    double surfaceAreaM2 = 0;
    double meanFreePathM = 0;            // 4V/S (Kuttruff, Room Acoustics)
    Bands absorptionAreaM2 = Bands::Zero();  // A = sum S_i alpha_i
    Bands meanAbsorption = Bands::Zero();    // A / S
    Bands airM = Bands::Zero();              // energy attenuation m (1/m), ISO 9613-1
    Bands sabineS = Bands::Zero();           // K V / (A + 4 m V)
    Bands eyringS = Bands::Zero();           // K V / (-S ln(1 - a) + 4 m V)
    Bands schroederHz = Bands::Zero();       // 2000 sqrt(T_eyring / V)
};

/* Room-wide Sabine/Eyring estimates from volume, areas per material and air (ISO 9613-1). */
RoomEstimates EstimateRoom(const Scene& scene, const Geometry& geometry);

/* Sabine (1900) T = K V / (A + 4 m V), K = 24 ln 10 / c. */
double SabineT(double volume, double absorptionArea, double airM, double c);
/* Eyring (1930) T = K V / (-S ln(1 - a) + 4 m V). */
double EyringT(double volume, double surfaceArea, double meanAlpha, double airM, double c);

}  // namespace hallwright
