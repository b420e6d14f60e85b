// Focusing rule on a faceted cylindrical rear wall (R = 20 m about the vertical line x = 0,
// z = 12 m; its vertex at z = 32 m; tools/make_scenes): centre and radius of curvature, and
// the focus from the paraxial mirror equation 1/s + 1/s' = 2/R (memory: Kuttruff, Room
// Acoustics; REFERENCES Part A section 6), each within 5 % as issue 10 asks.
#include "review/review_fixture.h"

namespace hallwright::test {
namespace {

constexpr const char* kCylinder = "tests/data/review/focus_cylinder/scene.toml";
constexpr double kR = 20.0, kCentreZ = 12.0, kVertexZ = 32.0;

double MirrorImageDistance(double s, double r) { return s * r / (2.0 * s - r); }

TEST(FocusingReview, CylinderCentreRadiusAndFocusWithinFivePercent) {
    auto room = LoadMoved(kCylinder);
    ASSERT_TRUE(room);
    const auto found = ReviewFocusing(room->scene, *room->geometry, ReviewOptions{});
    ASSERT_EQ(found.size(), 1u);
    const Finding& f = found[0];
    EXPECT_EQ(std::get<std::string>(*f.Value("shape")), "cylinder");
    EXPECT_NEAR(f.Number("radius_m"), kR, 0.05 * kR);
    const auto centre = f.List("centre");
    ASSERT_EQ(centre.size(), 3u);
    // The axis is vertical, so only the plan position of the centre is defined.
    EXPECT_LT(std::hypot(centre[0] - 0.0, centre[2] - kCentreZ), 0.05 * kR);
    // Source on the axis at z = 2: s = 30 m from the vertex, s' = 15 m, focus at z = 17 m.
    const double s = kVertexZ - 2.0, sPrime = MirrorImageDistance(s, kR);
    EXPECT_NEAR(sPrime, 15.0, 1e-12);
    EXPECT_NEAR(f.Number("source_distance_m"), s, 0.05 * s);
    EXPECT_NEAR(f.Number("image_distance_m"), sPrime, 0.05 * sPrime);
    const auto focus = f.List("focus");
    ASSERT_EQ(focus.size(), 3u);
    EXPECT_LT(std::hypot(focus[0] - 0.0, focus[2] - (kVertexZ - sPrime)), 0.05 * sPrime);
    // The seat placed at the focus is named; the others are not.
    EXPECT_EQ(f.severity, "warning");
    EXPECT_EQ(f.seats, (std::vector<std::string>{"at-focus"}));
    EXPECT_FALSE(f.remedies.empty());
}

TEST(FocusingReview, SourceAtTheCentreIsImagedOntoItself) {
    auto room = LoadMoved(kCylinder, nullptr, [](Scene& s) {
        s.sources[0].position = Vec3(0.0, 1.5, kCentreZ);
        s.receivers.erase(s.receivers.begin());  // no seat near the old focus
    });
    ASSERT_TRUE(room);
    const auto found = ReviewFocusing(room->scene, *room->geometry, ReviewOptions{});
    ASSERT_EQ(found.size(), 1u);
    // s = R gives s' = R: the reflection returns onto the stage.
    EXPECT_NEAR(found[0].Number("image_distance_m"), MirrorImageDistance(kR, kR), 0.05 * kR);
    EXPECT_EQ(found[0].severity, "warning");
    EXPECT_TRUE(found[0].seats.empty());
}

TEST(FocusingReview, SourceInsideHalfTheRadiusHasNoRealFocus) {
    auto room = LoadMoved(kCylinder, nullptr, [](Scene& s) { s.sources[0].position = Vec3(0.0, 1.5, 26.0); });
    ASSERT_TRUE(room);
    const auto found = ReviewFocusing(room->scene, *room->geometry, ReviewOptions{});
    ASSERT_EQ(found.size(), 1u);
    // s = 6 m < R/2: 2s - R < 0, a virtual image behind the wall.
    EXPECT_EQ(found[0].severity, "info");
    EXPECT_TRUE(found[0].seats.empty());
}

TEST(FocusingReview, InvariantUnderRotationMirrorAndRegrouping) {
    auto plain = LoadMoved(kCylinder);
    ASSERT_TRUE(plain);
    const auto ref = ReviewFocusing(plain->scene, *plain->geometry, ReviewOptions{});
    ASSERT_EQ(ref.size(), 1u);
    auto move = [](const Vec3& p) -> Vec3 { return MirrorX(RotateY(p, 37.0)); };
    auto moved = LoadMoved(kCylinder, move);
    const auto got = ReviewFocusing(moved->scene, *moved->geometry, ReviewOptions{});
    ASSERT_EQ(got.size(), 1u);
    for (const char* key : {"radius_m", "source_distance_m", "image_distance_m"})
        EXPECT_NEAR(got[0].Number(key), ref[0].Number(key), 1e-6) << key;
    const auto c0 = ref[0].List("focus"), c1 = got[0].List("focus");
    const Vec3 expected = move(Vec3(c0[0], c0[1], c0[2]));
    EXPECT_LT((Vec3(c1[0], c1[1], c1[2]) - expected).norm(), 1e-6);
    EXPECT_EQ(got[0].seats, ref[0].seats);
    // One group for the whole curved wall instead of one per facet.
    auto merged = LoadMoved(kCylinder, nullptr, [](Scene& s) {
        s.mesh.groupNames.push_back("curved_wall");
        for (int& g : s.mesh.triangleGroup)
            if (s.mesh.groupNames[g].rfind("rear_facet_", 0) == 0) g = static_cast<int>(s.mesh.groupNames.size()) - 1;
    });
    const auto again = ReviewFocusing(merged->scene, *merged->geometry, ReviewOptions{});
    ASSERT_EQ(again.size(), 1u);
    EXPECT_NEAR(again[0].Number("radius_m"), ref[0].Number("radius_m"), 1e-9);
    EXPECT_EQ(again[0].surfaces, (std::vector<std::string>{"curved_wall"}));
}

TEST(FocusingReview, FlatRoomsHaveNoConcavePatch) {
    for (const char* scene : {"scenes/theatre/scene.toml", "scenes/irregular/scene.toml",
                              "tests/data/review/flutter_splayed/scene.toml"}) {
        auto room = LoadMoved(scene);
        ASSERT_TRUE(room);
        EXPECT_TRUE(ReviewFocusing(room->scene, *room->geometry, ReviewOptions{}).empty()) << scene;
    }
}

}  // namespace
}  // namespace hallwright::test
