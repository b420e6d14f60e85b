// Colour scales of the report: a sequential ramp built in OKLab (Ottosson 2020, "A perceptual
// color space for image processing", formulas from memory) with lightness rising linearly, so
// that a darker seat always means a smaller value, also in grey-scale print.
#include <algorithm>
#include <cmath>
#include <cstdio>

#include "hallwright/report.h"

namespace hallwright {

namespace {

constexpr double kPi = 3.14159265358979323846;

struct Rgb {
    double r, g, b;  // linear sRGB
};

Rgb OklabToLinear(double L, double a, double b) {
    const double l_ = L + 0.3963377774 * a + 0.2158037573 * b;
    const double m_ = L - 0.1055613458 * a - 0.0638541728 * b;
    const double s_ = L - 0.0894841775 * a - 1.2914855480 * b;
    const double l = l_ * l_ * l_, m = m_ * m_ * m_, s = s_ * s_ * s_;
    return {4.0767416621 * l - 3.3077115913 * m + 0.2309699292 * s,
            -1.2684380046 * l + 2.6097574011 * m - 0.3413193965 * s,
            -0.0041960863 * l - 0.7034186147 * m + 1.7076147010 * s};
}

double LinearToOklabL(const Rgb& c) {
    const double l = 0.4122214708 * c.r + 0.5363325363 * c.g + 0.0514459929 * c.b;
    const double m = 0.2119034982 * c.r + 0.6806995451 * c.g + 0.1073969566 * c.b;
    const double s = 0.0883024619 * c.r + 0.2817188376 * c.g + 0.6299787005 * c.b;
    return 0.2104542553 * std::cbrt(l) + 0.7936177850 * std::cbrt(m) - 0.0040720468 * std::cbrt(s);
}

double Encode(double c) {  // sRGB transfer function (IEC 61966-2-1)
    c = std::clamp(c, 0.0, 1.0);
    return c <= 0.0031308 ? 12.92 * c : 1.055 * std::pow(c, 1.0 / 2.4) - 0.055;
}

double Decode(double c) { return c <= 0.04045 ? c / 12.92 : std::pow((c + 0.055) / 1.055, 2.4); }

bool InGamut(const Rgb& c) {
    constexpr double e = 1e-9;
    return c.r >= -e && c.r <= 1 + e && c.g >= -e && c.g <= 1 + e && c.b >= -e && c.b <= 1 + e;
}

std::array<int, 3> ToBytes(const Rgb& c) {
    return {static_cast<int>(std::lround(Encode(c.r) * 255)), static_cast<int>(std::lround(Encode(c.g) * 255)),
            static_cast<int>(std::lround(Encode(c.b) * 255))};
}

double LightnessOfBytes(const std::array<int, 3>& v) {
    return LinearToOklabL({Decode(v[0] / 255.0), Decode(v[1] / 255.0), Decode(v[2] / 255.0)});
}

std::string Hex(const std::array<int, 3>& v) {
    char buf[8];
    std::snprintf(buf, sizeof buf, "#%02x%02x%02x", v[0], v[1], v[2]);
    return buf;
}

/* The ramp: lightness 0.27 -> 0.87 linear in t, hue 262 deg -> 435 deg (blue, violet, rose,
   amber), chroma peaking mid-way and reduced where needed to stay inside the sRGB gamut. */
std::array<std::string, 256> BuildRamp() {
    std::array<std::string, 256> ramp;
    double previousL = -1;
    for (int i = 0; i < 256; ++i) {
        const double t = i / 255.0;
        const double L = 0.27 + 0.60 * t;
        const double h = (262.0 + 173.0 * t) * kPi / 180.0;
        double c = 0.085 + 0.075 * std::sin(kPi * t);
        // Gamut: shrink chroma at constant lightness until the colour fits.
        while (c > 0 && !InGamut(OklabToLinear(L, c * std::cos(h), c * std::sin(h)))) c -= 0.002;
        c = std::max(c, 0.0);
        const Rgb rgb = OklabToLinear(L, c * std::cos(h), c * std::sin(h));
        // 8-bit rounding: among the neighbouring byte triples, keep the one nearest the target
        // lightness that still rises above the previous entry (the ramp stays strictly ordered).
        std::array<int, 3> base = ToBytes(rgb), best = base;
        double bestErr = 1e9;
        for (int dr = -1; dr <= 1; ++dr)
            for (int dg = -1; dg <= 1; ++dg)
                for (int db = -1; db <= 1; ++db) {
                    std::array<int, 3> v = {std::clamp(base[0] + dr, 0, 255), std::clamp(base[1] + dg, 0, 255),
                                            std::clamp(base[2] + db, 0, 255)};
                    const double l = LightnessOfBytes(v);
                    if (l <= previousL) continue;
                    const double err = std::abs(l - L) + 1e-3 * (std::abs(dr) + std::abs(dg) + std::abs(db));
                    if (err < bestErr) {
                        bestErr = err;
                        best = v;
                    }
                }
        previousL = LightnessOfBytes(best);
        ramp[i] = Hex(best);
    }
    return ramp;
}

/* Diverging ramp: t in [0, 1], 0.5 = no change; hue 250 deg (blue) below, 65 deg (amber) above. */
std::array<std::string, 256> BuildDivergingRamp() {
    std::array<std::string, 256> ramp;
    for (int i = 0; i < 256; ++i) {
        const double x = (i - 127.5) / 127.5;  // -1 .. 1
        const double a = std::abs(x);
        const double L = 0.94 - 0.46 * a;
        const double h = (x < 0 ? 250.0 : 65.0) * kPi / 180.0;
        double c = 0.14 * std::sqrt(a);
        while (c > 0 && !InGamut(OklabToLinear(L, c * std::cos(h), c * std::sin(h)))) c -= 0.002;
        c = std::max(c, 0.0);
        ramp[i] = Hex(ToBytes(OklabToLinear(L, c * std::cos(h), c * std::sin(h))));
    }
    return ramp;
}

}  // namespace

const std::array<std::string, 256>& DivergingRamp() {
    static const std::array<std::string, 256> ramp = BuildDivergingRamp();
    return ramp;
}

const std::array<std::string, 256>& SequentialRamp() {
    static const std::array<std::string, 256> ramp = BuildRamp();
    return ramp;
}

int RampIndex(double value, double lo, double hi) {
    if (!std::isfinite(value)) return 0;
    const double t = hi > lo ? (value - lo) / (hi - lo) : 0.5;
    return std::clamp(static_cast<int>(std::floor(std::clamp(t, 0.0, 1.0) * 255.0 + 0.5)), 0, 255);
}

double OklabLightness(const std::string& hex) {
    unsigned r = 0, g = 0, b = 0;
    if (hex.size() != 7 || std::sscanf(hex.c_str(), "#%02x%02x%02x", &r, &g, &b) != 3)
        return std::nan("");
    return LightnessOfBytes({static_cast<int>(r), static_cast<int>(g), static_cast<int>(b)});
}

std::string ParameterUnit(const std::string& parameter) {
    std::string p = parameter;
    if (p.size() > 2 && p.substr(p.size() - 2) == "_M") p.resize(p.size() - 2);
    if (p == "EDT" || p == "T20" || p == "T30" || p == "Ts") return p == "Ts" ? "ms" : "s";
    if (p == "C80" || p == "C50" || p == "G") return "dB";
    return "";
}

}  // namespace hallwright
