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
}  // namespace hallwright::test
