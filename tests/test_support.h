#pragma once
#include <filesystem>
#include <fstream>
#include <string>

namespace hallwright::test {
/* Absolute path of a file in the source tree, e.g. SourcePath("scenes/shoebox/scene.toml"). */
std::string SourcePath(const std::string& relative);
/* A fresh, empty directory under the build tree for one test. */
std::string TempDir(const std::string& name);
/* Writes text to dir/name and returns the full path. */
std::string WriteFile(const std::string& dir, const std::string& name, const std::string& text);
/* The whole file as bytes ("" when it cannot be read). */
std::string ReadFile(const std::string& path);
}  // namespace hallwright::test

#include "hallwright/scene.h"

namespace hallwright::test {
/* A closed box [0,lx] x [0,ly] x [0,lz] (internal frame, y up) with one material on every
   face, 12 triangles wound with normals into the room, groups "x0","x1","y0","y1","z0","z1". */
Scene MakeBoxScene(double lx, double ly, double lz, const Material& material);
/* A material with the same absorption and scattering in every band. */
Material UniformMaterial(const std::string& name, double alpha, double scattering);
}  // namespace hallwright::test
