// Seat choice for decay curves and spatial IR files (spatial_seats.h).
#include "hallwright/spatial_seats.h"

#include <gtest/gtest.h>

namespace hallwright {
namespace {

/* One source at the origin; zone "a": seats 0..4 on a line going away from it (x = 2..6),
   zone "b": seats 5..7 at x = 10, 11, 12. */
Scene LineOfSeats() {
    Scene scene;
    scene.sources.push_back({});
    scene.sources[0].name = "S";
    scene.sources[0].position = Vec3::Zero();
    auto add = [&](const std::string& name, double x, const std::string& zone) {
        Receiver r;
        r.name = name;
        r.position = Vec3(x, 1.2, 0);
        r.zone = zone;
        scene.receivers.push_back(r);
    };
    for (int i = 0; i < 5; ++i) add("a" + std::to_string(i), 2 + i, "a");
    for (int i = 0; i < 3; ++i) add("b" + std::to_string(i), 10 + i, "b");
    return scene;
}

TEST(SpatialSeats, DefaultIsTheCentreAndTheBackOfEachZone) {
    const Scene scene = LineOfSeats();
    EXPECT_EQ(SeatsNearZoneCentroids(scene), (std::vector<int>{2, 6}));
    Diagnostics diag;
    EXPECT_EQ(ChooseSpatialSeats(scene, diag), (std::vector<int>{2, 4, 6, 7}));
    EXPECT_FALSE(diag.HasErrors());
}

TEST(SpatialSeats, MoreSeatsPerZoneSpreadOverTheZone) {
    Scene scene = LineOfSeats();
    scene.output.spatialPerZone = 3;
    Diagnostics diag;
    // Zone a: centre 2, back 4, then the seat farthest from both: 0. Zone b has only 3 seats.
    EXPECT_EQ(ChooseSpatialSeats(scene, diag), (std::vector<int>{0, 2, 4, 5, 6, 7}));
    scene.output.spatialPerZone = 1;
    EXPECT_EQ(ChooseSpatialSeats(scene, diag), (std::vector<int>{2, 6}));
}

TEST(SpatialSeats, NamedSeatsAloneOrWithPerZoneSeats) {
    Scene scene = LineOfSeats();
    scene.output.spatialSeats = {"b2", "a0"};
    scene.output.spatialSeatsAt = {{"hall.toml", 12, 18, ""}, {"hall.toml", 12, 24, ""}};
    scene.output.spatialPerZone = 0;
    Diagnostics diag;
    EXPECT_EQ(ChooseSpatialSeats(scene, diag), (std::vector<int>{0, 7}));
    scene.output.spatialPerZone = 1;
    EXPECT_EQ(ChooseSpatialSeats(scene, diag), (std::vector<int>{0, 2, 6, 7}));
    EXPECT_FALSE(diag.HasErrors());
}

TEST(SpatialSeats, UnknownNameIsAnErrorAtItsPlace) {
    Scene scene = LineOfSeats();
    scene.output.spatialSeats = {"a9"};
    scene.output.spatialSeatsAt = {{"hall.toml", 12, 18, ""}};
    Diagnostics diag;
    ChooseSpatialSeats(scene, diag);
    ASSERT_TRUE(diag.HasErrors());
    EXPECT_EQ(diag.Items()[0].at.line, 12);
    EXPECT_NE(diag.Items()[0].message.find("'a9'"), std::string::npos);
    EXPECT_NE(diag.Items()[0].message.find("did you mean"), std::string::npos) << diag.ToString();
}

}  // namespace
}  // namespace hallwright
