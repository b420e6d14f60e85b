#pragma once
// Air: speed of sound and atmospheric absorption after ISO 9613-1:1993, evaluated from the
// standard's formula at the exact base-ten midbands (not from a table).
#include "hallwright/bands.h"
#include "hallwright/scene.h"

namespace hallwright {

/* Speed of sound c = 343.2 sqrt(T / 293.15) m/s (ISO 9613-1). */
double SpeedOfSound(double temperatureC);
/* Pure-tone attenuation coefficient alpha in dB/m (ISO 9613-1 eq. 5). */
double AirAttenuationDbPerM(double frequencyHz, double temperatureC, double humidityPct,
                            double pressureKPa = 101.325);
/* Per band at the exact midbands: alpha in dB/m. */
Bands AirAttenuationDbPerM(const AirConditions& air);
/* Energy attenuation coefficient m = alpha / (10 lg e) in 1/m: energy x e^(-m d). */
Bands AirEnergyAttenuationPerM(const AirConditions& air);

}  // namespace hallwright
