// Shared helpers for the test suite (paths to fixtures and scenes).
#include "test_support.h"

namespace hallwright::test {

std::string SourcePath(const std::string& relative) { return std::string(HW_SOURCE_DIR) + "/" + relative; }

std::string TempDir(const std::string& name) {
    std::filesystem::path p = std::filesystem::path(HW_BINARY_DIR) / "test-tmp" / name;
    std::filesystem::remove_all(p);
    std::filesystem::create_directories(p);
    return p.string();
}

std::string WriteFile(const std::string& dir, const std::string& name, const std::string& text) {
    std::filesystem::path p = std::filesystem::path(dir) / name;
    std::filesystem::create_directories(p.parent_path());
    std::ofstream(p, std::ios::binary) << text;
    return p.string();
}

}  // namespace hallwright::test
