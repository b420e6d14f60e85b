// Shared helpers for the test suite (paths to fixtures and scenes).
#include "test_support.h"

#include <iterator>

namespace hallwright::test {

std::string SourcePath(const std::string& relative) { return std::string(HW_SOURCE_DIR) + "/" + relative; }

std::string TempDir(const std::string& name) {
    std::filesystem::path p = std::filesystem::path(HW_BINARY_DIR) / "test-tmp" / name;
    std::filesystem::remove_all(p);
    std::filesystem::create_directories(p);
    return p.string();
}

std::string ReadFile(const std::string& path) {
    std::ifstream in(path, std::ios::binary);
    return std::string(std::istreambuf_iterator<char>(in), std::istreambuf_iterator<char>());
}

std::string WriteFile(const std::string& dir, const std::string& name, const std::string& text) {
    std::filesystem::path p = std::filesystem::path(dir) / name;
    std::filesystem::create_directories(p.parent_path());
    std::ofstream(p, std::ios::binary) << text;
    return p.string();
}

}  // namespace hallwright::test

namespace hallwright::test {

Material UniformMaterial(const std::string& name, double alpha, double scattering) {
    Material m;
    m.name = name;
    m.absorption = Bands::Constant(alpha);
    m.scattering = Bands::Constant(scattering);
    return m;
}

Scene MakeBoxScene(double lx, double ly, double lz, const Material& material) {
    Scene s;
    s.title = "box";
    s.scenePath = "box.toml";
    s.meshPath = "box.obj";
    s.materials = {material};
    Mesh& m = s.mesh;
    for (int i = 0; i < 8; ++i) m.vertices.emplace_back((i & 1) ? lx : 0.0, (i & 2) ? ly : 0.0, (i & 4) ? lz : 0.0);
    // Quads (a, b, c, d) counter-clockwise as seen from inside the box.
    const int quads[6][4] = {{0, 2, 6, 4}, {1, 5, 7, 3}, {0, 4, 5, 1}, {2, 3, 7, 6}, {0, 1, 3, 2}, {4, 6, 7, 5}};
    m.groupNames = {"x0", "x1", "y0", "y1", "z0", "z1"};
    for (int q = 0; q < 6; ++q) {
        const int* v = quads[q];
        for (auto tri : {std::array<uint32_t, 3>{uint32_t(v[0]), uint32_t(v[1]), uint32_t(v[2])},
                         std::array<uint32_t, 3>{uint32_t(v[0]), uint32_t(v[2]), uint32_t(v[3])}}) {
            m.triangles.push_back(tri);
            m.triangleMaterial.push_back(0);
            m.triangleGroup.push_back(q);
            m.triangleLine.push_back(static_cast<int>(m.triangles.size()) + 8);
        }
    }
    return s;
}

}  // namespace hallwright::test
