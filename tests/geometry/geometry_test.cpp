#include "hallwright/geometry.h"

#include <gtest/gtest.h>

#include "hallwright/room_acoustics.h"
#include "test_support.h"

namespace hallwright {
namespace {

using test::MakeBoxScene;
using test::UniformMaterial;

// A rectangular room: V = lx ly lz and S = 2 (lx ly + ly lz + lx lz) exactly (analytic).
TEST(Geometry, ShoeboxVolumeAreaAndSixPlanarFaces) {
    Scene scene = MakeBoxScene(20, 10, 15, UniformMaterial("wall", 0.1, 0));
    Diagnostics diag;
    auto g = Geometry::Build(scene, diag);
    ASSERT_TRUE(g) << diag.ToString();
    EXPECT_EQ(diag.Items().size(), 0u) << diag.ToString();
    EXPECT_NEAR(g->Volume(), 3000.0, 1e-9);
    EXPECT_NEAR(g->SurfaceArea(), 1300.0, 1e-9);
    EXPECT_EQ(g->Faces().size(), 6u);
    EXPECT_TRUE(g->IsClosed());
    for (const Face& f : g->Faces()) {
        // Every face normal points into the room: the room centre is on its positive side.
        EXPECT_GT(f.SignedDistance(Vec3(10, 5, 7.5)), 0);
    }
    EXPECT_TRUE(g->Contains(Vec3(10, 5, 7.5)));
    EXPECT_FALSE(g->Contains(Vec3(25, 5, 7.5)));
    EXPECT_NEAR(g->DistanceToSurface(Vec3(10, 1.2, 7.5)), 1.2, 1e-12);
}

TEST(Geometry, OutwardWoundModelIsReorientedWithAWarning) {
    Scene scene = MakeBoxScene(4, 3, 5, UniformMaterial("wall", 0.1, 0));
    for (auto& t : scene.mesh.triangles) std::swap(t[1], t[2]);
    Diagnostics diag;
    auto g = Geometry::Build(scene, diag);
    ASSERT_TRUE(g);
    EXPECT_NEAR(g->Volume(), 60.0, 1e-9);
    EXPECT_NE(diag.ToString().find("point away from the room"), std::string::npos) << diag.ToString();
    for (const Face& f : g->Faces()) EXPECT_GT(f.SignedDistance(Vec3(2, 1.5, 2.5)), 0);
}

TEST(Geometry, InconsistentTriangleIsFlippedAndReportedWithItsLine) {
    Scene scene = MakeBoxScene(4, 3, 5, UniformMaterial("wall", 0.1, 0));
    std::swap(scene.mesh.triangles[3][1], scene.mesh.triangles[3][2]);
    scene.mesh.triangleLine[3] = 42;
    Diagnostics diag;
    auto g = Geometry::Build(scene, diag);
    ASSERT_TRUE(g);
    EXPECT_NEAR(g->Volume(), 60.0, 1e-9);
    EXPECT_EQ(g->Faces().size(), 6u);
    EXPECT_NE(diag.ToString().find("box.obj:42: warning: 1 triangle(s) were wound against"), std::string::npos)
        << diag.ToString();
}

TEST(Geometry, OpenModelWarnsWithTheEdgesAndTheirLines) {
    Scene scene = MakeBoxScene(4, 3, 5, UniformMaterial("wall", 0.1, 0));
    scene.mesh.triangles.pop_back();
    scene.mesh.triangleMaterial.pop_back();
    scene.mesh.triangleGroup.pop_back();
    scene.mesh.triangleLine.pop_back();
    Diagnostics diag;
    auto g = Geometry::Build(scene, diag);
    ASSERT_TRUE(g);
    EXPECT_FALSE(g->IsClosed());
    EXPECT_EQ(g->OpenEdges().size(), 3u);
    EXPECT_NE(diag.ToString().find("the model is open: 3 edge(s)"), std::string::npos) << diag.ToString();
    EXPECT_NE(diag.ToString().find("box.obj:"), std::string::npos);
}

TEST(Geometry, DegenerateTriangleIsDroppedWithItsLine) {
    Scene scene = MakeBoxScene(4, 3, 5, UniformMaterial("wall", 0.1, 0));
    scene.mesh.triangles.push_back({0, 1, 1});
    scene.mesh.triangleMaterial.push_back(0);
    scene.mesh.triangleGroup.push_back(0);
    scene.mesh.triangleLine.push_back(77);
    Diagnostics diag;
    auto g = Geometry::Build(scene, diag);
    ASSERT_TRUE(g);
    EXPECT_EQ(scene.mesh.TriangleCount(), 12u);
    EXPECT_NE(diag.ToString().find("degenerate (zero-area) triangle(s) dropped, from face line(s) 77"),
              std::string::npos)
        << diag.ToString();
}

TEST(Geometry, ImplausiblyLargeModelSuggestsMillimetres) {
    Scene scene = MakeBoxScene(20000, 10000, 15000, UniformMaterial("wall", 0.1, 0));
    Diagnostics diag;
    auto g = Geometry::Build(scene, diag);
    ASSERT_TRUE(g);
    EXPECT_NE(diag.ToString().find("units = \"mm\""), std::string::npos) << diag.ToString();
}

// Shoebox 20 x 15 x 10 m (REFERENCES Part A §2, computed with K = 24 ln10 / c, c = 343.2):
// Sabine (1900) and Eyring (1930, from memory of Kuttruff, Room Acoustics).
TEST(RoomAcoustics, SabineAndEyringMatchTheShoeboxTable) {
    Scene scene = MakeBoxScene(20, 10, 15, UniformMaterial("wall", 0.1, 0));
    Diagnostics diag;
    auto g = Geometry::Build(scene, diag);
    ASSERT_TRUE(g);
    scene.air = AirConditions{20, 50, 101.325};
    const RoomEstimates e = EstimateRoom(scene, *g);
    EXPECT_NEAR(e.meanFreePathM, 9.2308, 1e-4);
    const double c = 343.2;
    EXPECT_NEAR(SabineT(3000, 130, 0, c), 3.716, 0.0005);
    EXPECT_NEAR(EyringT(3000, 1300, 0.1, 0, c), 3.527, 0.0005);
    EXPECT_NEAR(SabineT(3000, 390, 0, c), 1.239, 0.0005);
    EXPECT_NEAR(EyringT(3000, 1300, 0.3, 0, c), 1.042, 0.0005);
    // With air absorption at 1 kHz, 20 °C / 50 % (4mV = 12.88 m^2): 3.381 and 3.224 s.
    // Tolerance: the table's three decimals (0.0005) plus its m rounded to five digits.
    EXPECT_NEAR(e.sabineS[4], 3.381, 0.001);
    EXPECT_NEAR(e.eyringS[4], 3.224, 0.001);
    EXPECT_NEAR(e.schroederHz[4], 2000 * std::sqrt(3.224 / 3000.0), 0.05);
}

}  // namespace
}  // namespace hallwright
