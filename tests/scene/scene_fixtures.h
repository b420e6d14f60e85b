#pragma once
// Small inline fixtures for the scene-loading tests: box-shaped OBJ text and scene TOML.
#include <string>

#include <gtest/gtest.h>

#include "hallwright/diagnostics.h"

namespace hallwright::test {

/* OBJ text of the closed box [0,lx] x [0,ly] x [0,lz] (y up), every length times `scale`;
   groups floor, ceiling, walls; all faces use `material`. With zUp the box is written in a
   z-up frame: the model point (x, y, z) is the internal point (x, z, -y) rotated back, i.e.
   the vertical is z and the model's +y points along internal -z. */
inline std::string BoxObj(double lx, double ly, double lz, double scale = 1.0, bool zUp = false,
                          const std::string& material = "concrete") {
    auto v = [&](double x, double y, double z) {
        // Internal (x, y, z) -> model: y-up as is; z-up inverse rotation (x, -z, y).
        double mx = x, my = y, mz = z;
        if (zUp) {
            my = -z;
            mz = y;
        }
        return "v " + std::to_string(mx * scale) + " " + std::to_string(my * scale) + " " +
               std::to_string(mz * scale) + "\n";
    };
    std::string s = "# box\n";
    s += v(0, 0, 0) + v(lx, 0, 0) + v(lx, 0, lz) + v(0, 0, lz);      // 1-4 floor
    s += v(0, ly, 0) + v(lx, ly, 0) + v(lx, ly, lz) + v(0, ly, lz);  // 5-8 ceiling
    s += "usemtl " + material + "\n";
    // Wound counter-clockwise seen from inside (normals into the room).
    s += "g floor\nf 1 4 3 2\n";
    s += "g ceiling\nf 5 6 7 8\n";
    s += "g walls\nf 1 2 6 5\nf 2 3 7 6\nf 3 4 8 7\nf 4 1 5 8\n";
    return s;
}

/* True when diag holds a message of `severity` located at file:line that contains `text`. */
inline ::testing::AssertionResult HasMessage(const Diagnostics& diag, Severity severity, const std::string& file,
                                             int line, const std::string& text) {
    for (const auto& d : diag.Items()) {
        if (d.severity != severity || d.at.file != file) continue;
        if (line >= 0 && d.at.line != line) continue;
        const std::string formatted = FormatDiagnostic(d);
        if (formatted.find(text) != std::string::npos &&
            formatted.rfind(file + (line > 0 ? ":" + std::to_string(line) : std::string()), 0) == 0)
            return ::testing::AssertionSuccess();
    }
    return ::testing::AssertionFailure() << "no message at " << file << ":" << line << " containing \"" << text
                                         << "\"; got:\n"
                                         << diag.ToString();
}
inline ::testing::AssertionResult HasError(const Diagnostics& diag, const std::string& file, int line,
                                           const std::string& text) {
    return HasMessage(diag, Severity::kError, file, line, text);
}

}  // namespace hallwright::test
