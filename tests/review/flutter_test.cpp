// Flutter rule: parallel hard walls found, a 10-degree splay passes, and the finding does not
// depend on rotation, mirroring, grouping, units or the up axis of the model.
#include <algorithm>

#include "review/review_fixture.h"

namespace hallwright::test {
namespace {

// c = 343.2 m/s at 20 degC (ISO 9613-1, REFERENCES Part A section 1); period 2d/c (REFERENCES
// Part A section 6: flutter repetition 2L/c).
constexpr double kC20 = 343.2;

TEST(FlutterReview, ParallelHardWallsFoundWithPeriod2dOverC) {
    auto room = LoadMoved("tests/data/review/flutter_parallel/scene.toml");
    ASSERT_TRUE(room);
    const auto flutter = OfRule(ReviewFlutter(room->scene, *room->geometry, ReviewOptions{}), "flutter");
    ASSERT_EQ(flutter.size(), 1u);
    const Finding& f = flutter[0];
    EXPECT_EQ(f.severity, "warning");
    // Constructed: hard walls x = 0 and x = 12 m (tools/make_scenes).
    EXPECT_NEAR(f.Number("separation_m"), 12.0, 1e-9);
    EXPECT_NEAR(f.Number("period_s"), 2.0 * 12.0 / kC20, 0.001);  // issue 10: within 1 ms
    EXPECT_NEAR(f.Number("angle_deg"), 0.0, 1e-6);
    EXPECT_EQ(f.surfaces, (std::vector<std::string>{"wall_1", "wall_3"}));
    EXPECT_EQ(f.seats, (std::vector<std::string>{"between-1", "between-2", "between-3"}));
    EXPECT_FALSE(f.remedies.empty());
}

TEST(FlutterReview, TenDegreeSplayPasses) {
    auto room = LoadMoved("tests/data/review/flutter_splayed/scene.toml");
    ASSERT_TRUE(room);
    const auto flutter = OfRule(ReviewFlutter(room->scene, *room->geometry, ReviewOptions{}), "flutter");
    ASSERT_EQ(flutter.size(), 1u);
    EXPECT_EQ(flutter[0].severity, "info");
    EXPECT_NEAR(flutter[0].Number("angle_deg"), 10.0, 1e-4);  // constructed splay (file rounded to 1 um)
    EXPECT_TRUE(flutter[0].seats.empty());
    // The same pair is a flutter pair once the threshold is above the splay.
    ReviewOptions loose;
    loose.flutterMaxAngleDeg = 12.0;
    const auto again = ReviewFlutter(room->scene, *room->geometry, loose);
    ASSERT_EQ(again.size(), 1u);
    EXPECT_EQ(again[0].severity, "warning");
}

TEST(FlutterReview, AbsorbingOneWallRemovesTheFinding) {
    auto room = LoadMoved("tests/data/review/flutter_parallel/scene.toml", nullptr, [](Scene& s) {
        // Make the material of one hard wall (group wall_1) absorbing at 1-4 kHz.
        Material soft = s.materials[0];
        soft.name = "soft";
        soft.absorption = Bands::Constant(0.5);
        s.materials.push_back(soft);
        for (size_t t = 0; t < s.mesh.triangleGroup.size(); ++t)
            if (s.mesh.groupNames[s.mesh.triangleGroup[t]] == "wall_1")
                s.mesh.triangleMaterial[t] = static_cast<int>(s.materials.size()) - 1;
    });
    ASSERT_TRUE(room);
    EXPECT_TRUE(ReviewFlutter(room->scene, *room->geometry, ReviewOptions{}).empty());
}

void ExpectSameFlutter(const std::vector<Finding>& a, const std::vector<Finding>& b) {
    ASSERT_EQ(a.size(), b.size());
    for (size_t i = 0; i < a.size(); ++i) {
        EXPECT_EQ(a[i].severity, b[i].severity);
        for (const char* key : {"separation_m", "period_s", "overlap_m2"})
            EXPECT_NEAR(a[i].Number(key), b[i].Number(key), 1e-6 * std::max(1.0, std::abs(a[i].Number(key))))
                << key;
        EXPECT_NEAR(a[i].Number("angle_deg"), b[i].Number("angle_deg"), 1e-5);
        EXPECT_EQ(a[i].seats, b[i].seats);
    }
}

TEST(FlutterReview, InvariantUnderRotationMirrorRegroupingAndZUpMillimetres) {
    for (const char* scene : {"tests/data/review/flutter_parallel/scene.toml", "tests/data/review/flutter_splayed/scene.toml"}) {
        SCOPED_TRACE(scene);
        auto plain = LoadMoved(scene);
        ASSERT_TRUE(plain);
        const auto ref = ReviewFlutter(plain->scene, *plain->geometry, ReviewOptions{});
        ASSERT_FALSE(ref.empty());

        auto rotated = LoadMoved(scene, [](const Vec3& p) -> Vec3 { return RotateY(p, 37.0) + Vec3(3.0, 0.0, -5.0); });
        ExpectSameFlutter(ref, ReviewFlutter(rotated->scene, *rotated->geometry, ReviewOptions{}));

        auto mirrored = LoadMoved(scene, [](const Vec3& p) -> Vec3 { return MirrorX(p); });
        ExpectSameFlutter(ref, ReviewFlutter(mirrored->scene, *mirrored->geometry, ReviewOptions{}));

        // Every triangle its own group: faces split, the surfaces stay the same.
        auto regrouped = LoadMoved(scene, nullptr, [](Scene& s) {
            s.mesh.groupNames.clear();
            for (size_t t = 0; t < s.mesh.triangleGroup.size(); ++t) {
                s.mesh.triangleGroup[t] = static_cast<int>(t);
                s.mesh.groupNames.push_back("piece_" + std::to_string(t));
            }
        });
        ASSERT_GT(regrouped->geometry->Faces().size(), plain->geometry->Faces().size());
        ExpectSameFlutter(ref, ReviewFlutter(regrouped->scene, *regrouped->geometry, ReviewOptions{}));
    }
    // The parallel room exported in millimetres with z up.
    auto a = LoadMoved("tests/data/review/flutter_parallel/scene.toml");
    auto b = LoadMoved("tests/data/review/flutter_parallel_zup_mm/scene.toml");
    ASSERT_TRUE(a && b);
    ExpectSameFlutter(ReviewFlutter(a->scene, *a->geometry, ReviewOptions{}),
                      ReviewFlutter(b->scene, *b->geometry, ReviewOptions{}));
}

TEST(FlutterReview, TheatreStageHouseFlagsButSplayedSideWallsPass) {
    auto room = LoadMoved("scenes/theatre/scene.toml");
    ASSERT_TRUE(room);
    const auto flutter = ReviewFlutter(room->scene, *room->geometry, ReviewOptionsFrom(room->scene));
    // Side walls: each splayed atan(1.5 / 26) = 3.30 deg, 6.60 deg between them (constructed).
    bool sideWallsSeen = false;
    for (const Finding& f : flutter) {
        const bool side = std::find(f.surfaces.begin(), f.surfaces.end(), "side_wall_left") != f.surfaces.end();
        if (side) {
            sideWallsSeen = true;
            EXPECT_EQ(f.severity, "info");
            EXPECT_NEAR(f.Number("angle_deg"), 2.0 * std::atan(1.5 / 26.0) * 180.0 / M_PI, 1e-6);
        }
    }
    EXPECT_TRUE(sideWallsSeen);
    const auto warnings = OfSeverity(flutter, "warning");
    ASSERT_EQ(warnings.size(), 1u);  // the parallel hard side walls of the stage house, 18 m apart
    EXPECT_NEAR(warnings[0].Number("separation_m"), 18.0, 1e-9);
}

}  // namespace
}  // namespace hallwright::test
