// T-junctions (a vertex of one triangle on an edge of another, not shared) leave the mesh
// open along that edge; the closure check by shared edges must report them, naming the file.
#include <gtest/gtest.h>

#include "hallwright/geometry.h"
#include "test_support.h"

namespace hallwright {
namespace {

// A box whose z = 0 wall is split at the midpoint M of its bottom edge while the floor keeps
// that edge whole: edge 0-1 is used by the floor only, 0-M and M-1 by the wall only.
TEST(GeometryTJunction, VertexOnAnEdgeOfTheNeighbourIsReportedAsOpen) {
    Scene scene = test::MakeBoxScene(6, 3, 4, test::UniformMaterial("wall", 0.1, 0));
    Mesh& m = scene.mesh;
    const int z0 = 4;  // group "z0": triangles (0,1,3) and (0,3,2)
    ASSERT_EQ(m.groupNames[z0], "z0");
    for (size_t t = m.triangles.size(); t-- > 0;)
        if (m.triangleGroup[t] == z0) {
            m.triangles.erase(m.triangles.begin() + t);
            m.triangleMaterial.erase(m.triangleMaterial.begin() + t);
            m.triangleGroup.erase(m.triangleGroup.begin() + t);
            m.triangleLine.erase(m.triangleLine.begin() + t);
        }
    m.vertices.emplace_back(3, 0, 0);  // vertex 8 = M, on the floor's edge 0-1
    for (auto tri : {std::array<uint32_t, 3>{0, 8, 2}, std::array<uint32_t, 3>{8, 3, 2}, std::array<uint32_t, 3>{8, 1, 3}}) {
        m.triangles.push_back(tri);
        m.triangleMaterial.push_back(0);
        m.triangleGroup.push_back(z0);
        m.triangleLine.push_back(100 + static_cast<int>(m.triangles.size()));
    }
    Diagnostics diag;
    auto g = Geometry::Build(scene, diag);
    ASSERT_TRUE(g) << diag.ToString();
    EXPECT_FALSE(g->IsClosed());
    ASSERT_EQ(g->OpenEdges().size(), 3u) << diag.ToString();
    for (const OpenEdge& e : g->OpenEdges()) {
        // All three lie on the line y = z = 0 (the floor edge and its two halves).
        EXPECT_EQ(e.a.y(), 0.0);
        EXPECT_EQ(e.a.z(), 0.0);
        EXPECT_EQ(e.b.y(), 0.0);
        EXPECT_EQ(e.b.z(), 0.0);
    }
    const std::string text = diag.ToString();
    EXPECT_NE(text.find("box.obj"), std::string::npos) << text;
    EXPECT_NE(text.find("the model is open"), std::string::npos) << text;
    EXPECT_NE(text.find("share vertices along these edges"), std::string::npos) << text;
}

}  // namespace
}  // namespace hallwright
