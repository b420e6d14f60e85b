// Balcony overhang rule on the demo theatre: D and H measured from the geometry agree with
// the constructed values (written by tools/make_scenes in scene.toml), verdicts per venue.
#include <fstream>
#include <regex>
#include <set>

#include "review/review_fixture.h"

namespace hallwright::test {
namespace {

constexpr const char* kTheatre = "scenes/theatre/scene.toml";

/* The constructed D and H from the comment tools/make_scenes writes into the scene file. */
std::pair<double, double> ConstructedDepthAndHeight() {
    std::ifstream in(SourcePath(kTheatre));
    const std::string text((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
    std::smatch d, h;
    const std::regex rd(R"(#.*D = ([0-9.]+) m)"), rh(R"(#\s*H = ([0-9.]+) m)");
    EXPECT_TRUE(std::regex_search(text, d, rd));
    EXPECT_TRUE(std::regex_search(text, h, rh));
    return {std::stod(d[1]), std::stod(h[1])};
}

TEST(OverhangReview, TheatreDepthAndHeightWithinTenCentimetres) {
    auto room = LoadMoved(kTheatre);
    ASSERT_TRUE(room);
    const auto [depth, height] = ConstructedDepthAndHeight();
    ASSERT_GT(depth / height, 1.0);  // the demo is built with 1 < D/H < 2
    ASSERT_LT(depth / height, 2.0);
    ReviewOptions theatre;
    theatre.venue = Venue::kTheatre;
    const auto found = ReviewOverhangs(room->scene, *room->geometry, theatre);
    ASSERT_EQ(found.size(), 1u);
    const Finding& f = found[0];
    EXPECT_NEAR(f.Number("depth_m"), depth, 0.1);  // issue 10: within 0.1 m
    EXPECT_NEAR(f.Number("height_m"), height, 0.1);
    // Barron (from memory, REFERENCES Part A section 6): theatres D <= 2H.
    EXPECT_EQ(f.severity, "info");
    EXPECT_EQ(f.Number("limit"), 2.0);
    EXPECT_EQ(std::get<std::string>(*f.Value("venue")), "theatre");

    // Concert halls D <= H: the same balcony fails.
    ReviewOptions concert;
    concert.venue = Venue::kConcert;
    const auto strict = ReviewOverhangs(room->scene, *room->geometry, concert);
    ASSERT_EQ(strict.size(), 1u);
    EXPECT_EQ(strict[0].severity, "warning");
    EXPECT_EQ(strict[0].Number("limit"), 1.0);
    EXPECT_NEAR(strict[0].Number("ratio"), f.Number("ratio"), 1e-12);
    EXPECT_FALSE(strict[0].remedies.empty());

    // The scene file says venue = "theatre".
    EXPECT_EQ(ReviewOptionsFrom(room->scene).venue, Venue::kTheatre);
}

TEST(OverhangReview, SeatsUnderTheBalconyAreExactlyTheUnderBalconyZone) {
    auto room = LoadMoved(kTheatre);
    ASSERT_TRUE(room);
    const auto found = ReviewOverhangs(room->scene, *room->geometry, ReviewOptions{});
    ASSERT_EQ(found.size(), 1u);
    std::set<std::string> expected;
    for (const Receiver& r : room->scene.receivers)
        if (r.zone == "under-balcony") expected.insert(r.name);
    ASSERT_GT(expected.size(), 100u);
    EXPECT_EQ(std::set<std::string>(found[0].seats.begin(), found[0].seats.end()), expected);
}

TEST(OverhangReview, InvariantUnderRotationMirrorAndRegrouping) {
    auto plain = LoadMoved(kTheatre);
    ASSERT_TRUE(plain);
    const auto ref = ReviewOverhangs(plain->scene, *plain->geometry, ReviewOptions{});
    ASSERT_EQ(ref.size(), 1u);
    auto check = [&](const BuiltRoom& r) {
        const auto got = ReviewOverhangs(r.scene, *r.geometry, ReviewOptions{});
        ASSERT_EQ(got.size(), 1u);
        for (const char* key : {"depth_m", "height_m", "ratio"}) EXPECT_NEAR(got[0].Number(key), ref[0].Number(key), 1e-6) << key;
        // The seat grid itself may differ once rotated; the seats found are still the zone.
        size_t zone = 0;
        for (const Receiver& rec : r.scene.receivers) zone += rec.zone == "under-balcony";
        EXPECT_EQ(got[0].seats.size(), zone);
    };
    check(*LoadMoved(kTheatre, [](const Vec3& p) -> Vec3 { return RotateY(p, 37.0) + Vec3(5.0, 0.0, 2.0); }));
    check(*LoadMoved(kTheatre, [](const Vec3& p) -> Vec3 { return MirrorX(p); }));
    // The soffit split into two groups by triangle: still one overhang with the same numbers.
    check(*LoadMoved(kTheatre, nullptr, [](Scene& s) {
        s.mesh.groupNames.push_back("soffit_part_b");
        const int newGroup = static_cast<int>(s.mesh.groupNames.size()) - 1;
        bool odd = false;
        for (size_t t = 0; t < s.mesh.triangleGroup.size(); ++t)
            if (s.mesh.groupNames[s.mesh.triangleGroup[t]] == "balcony_soffit") {
                if (odd) s.mesh.triangleGroup[t] = newGroup;
                odd = !odd;
            }
    }));
}

TEST(OverhangReview, NoBalconyNoFinding) {
    auto room = LoadMoved("scenes/shoebox/scene.toml");
    ASSERT_TRUE(room);
    EXPECT_TRUE(ReviewOverhangs(room->scene, *room->geometry, ReviewOptions{}).empty());
}

}  // namespace
}  // namespace hallwright::test
