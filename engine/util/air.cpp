// Air absorption after ISO 9613-1:1993 (formula as given in REFERENCES Part A §1).
#include "hallwright/air.h"

#include <cmath>

namespace hallwright {

double SpeedOfSound(double temperatureC) {
    // ISO 9613-1: c = 343.2 (T / T0)^(1/2), T0 = 293.15 K.
    return 343.2 * std::sqrt((temperatureC + 273.15) / 293.15);
}

double AirAttenuationDbPerM(double f, double temperatureC, double humidityPct, double pressureKPa) {
    // ISO 9613-1:1993 eqs. (3)-(5) and Annex B (saturation vapour pressure).
    const double T = temperatureC + 273.15;
    const double T0 = 293.15, T01 = 273.16, pr = 101.325;
    const double pa = pressureKPa;
    const double C = -6.8346 * std::pow(T01 / T, 1.261) + 4.6151;
    const double psatRatio = std::pow(10.0, C);
    const double h = humidityPct * psatRatio / (pa / pr);
    const double frO = (pa / pr) * (24.0 + 4.04e4 * h * (0.02 + h) / (0.391 + h));
    const double frN = (pa / pr) * std::pow(T / T0, -0.5) *
                       (9.0 + 280.0 * h * std::exp(-4.170 * (std::pow(T / T0, -1.0 / 3.0) - 1.0)));
    const double f2 = f * f;
    return 8.686 * f2 *
           (1.84e-11 * std::pow(pa / pr, -1.0) * std::sqrt(T / T0) +
            std::pow(T / T0, -2.5) * (0.01275 * std::exp(-2239.1 / T) / (frO + f2 / frO) +
                                      0.1068 * std::exp(-3352.0 / T) / (frN + f2 / frN)));
}

Bands AirAttenuationDbPerM(const AirConditions& air) {
    Bands a;
    for (int b = 0; b < kBandCount; ++b)
        a[b] = AirAttenuationDbPerM(ExactMidbandHz(b), air.temperatureC, air.humidityPct, air.pressureKPa);
    return a;
}

Bands AirEnergyAttenuationPerM(const AirConditions& air) {
    // m = alpha / (10 lg e) (ISO 354:2003, from memory): energy falls as e^(-m d).
    return AirAttenuationDbPerM(air) / (10.0 * std::log10(std::exp(1.0)));
}

}  // namespace hallwright
