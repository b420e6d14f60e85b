#include <cmath>
#include <map>

#include <gtest/gtest.h>

#include "hallwright/room.h"
#include "scene_fixtures.h"
#include "test_support.h"

namespace hallwright {
namespace {

using test::BoxObj;
using test::HasError;

// A closed room whose floor rises from y = 0 at z = 0 to y = 2 at z = 20 (ceiling at y = 8,
// x in [0, 10]), wound with normals into the room; groups rake, ceiling, walls.
std::string RakedRoomObj() {
    return "v 0 0 0\nv 10 0 0\nv 10 2 20\nv 0 2 20\n"
           "v 0 8 0\nv 10 8 0\nv 10 8 20\nv 0 8 20\n"
           "usemtl concrete\n"
           "g rake\nf 1 4 3 2\n"
           "g ceiling\nf 5 6 7 8\n"
           "g walls\nf 1 2 6 5\nf 2 3 7 6\nf 3 4 8 7\nf 4 1 5 8\n";
}

std::unique_ptr<Room> Load(const std::string& name, const std::string& toml, const std::string& obj,
                           Diagnostics& diag, std::string* scenePath = nullptr) {
    const std::string dir = test::TempDir("seating/" + name);
    test::WriteFile(dir, "room.obj", obj);
    const std::string path = test::WriteFile(dir, "scene.toml", toml);
    if (scenePath) *scenePath = path;
    return LoadRoom(path, diag);
}

const Receiver* Find(const Room& room, const std::string& name) {
    for (const auto& r : room.scene.receivers)
        if (r.name == name) return &r;
    return nullptr;
}

// Box 10 x 5 x 20 m, source near the z = 0 end: a 1 m grid over the floor has 11 x 21 points;
// the 60 on the perimeter lie on the walls (0 m from a surface) and are dropped with one warning.
TEST(Seating, GridOverFloorNamesRowsFromTheSourceAndSeatsFromItsLeft) {
    const std::string toml =
        "[model]\nmesh = \"room.obj\"\n"
        "[[source]]\nname = \"S\"\nposition = [5, 1.5, 2]\n"
        "[[seating]]\nzone = \"stalls\"\nsurfaces = [\"floor\"]\n";
    Diagnostics diag;
    std::string path;
    auto room = Load("grid", toml, BoxObj(10, 5, 20), diag, &path);
    ASSERT_TRUE(room) << diag.ToString();
    EXPECT_EQ(room->scene.receivers.size(), 231u - 60u);
    EXPECT_TRUE(test::HasMessage(diag, Severity::kWarning, path, 7,
                                 "60 of 231 generated seats of zone 'stalls' dropped: outside the room or within 0.1 m"));
    EXPECT_EQ(diag.WarningCount(), 1) << diag.ToString();
    // Row 1 is the grid row nearest the source (z = 0, dropped: on the wall); seats count from
    // the left as seen from the source looking along +z. Looking along +z with +y up, the
    // right-hand side is -x (right = forward x up), so seat 1 is at x = 10 (dropped).
    const Receiver* r = Find(*room, "stalls-r02-s02");
    ASSERT_NE(r, nullptr);
    EXPECT_TRUE(r->position.isApprox(Vec3(9, 1.2, 1))) << r->position.transpose();
    const Receiver* next = Find(*room, "stalls-r02-s03");
    ASSERT_NE(next, nullptr);
    EXPECT_TRUE(next->position.isApprox(Vec3(8, 1.2, 1)));
    // Seat 2 is left of seat 3 for a viewer at the source looking at them (row 10, in front).
    const Receiver* s2 = Find(*room, "stalls-r10-s02");
    const Receiver* s3 = Find(*room, "stalls-r10-s03");
    ASSERT_TRUE(s2 && s3);
    const Vec3 forward = (s2->position - room->scene.sources[0].position).normalized();
    EXPECT_LT((s2->position - s3->position).dot(forward.cross(Vec3::UnitY())), 0);
    EXPECT_NE(Find(*room, "stalls-r20-s10"), nullptr);
    EXPECT_EQ(Find(*room, "stalls-r01-s02"), nullptr);  // row 1 is on the wall
    EXPECT_EQ(Find(*room, "stalls-r21-s02"), nullptr);
    EXPECT_EQ(r->zone, "stalls");
    EXPECT_TRUE(r->generated);
    EXPECT_EQ(r->facingSource, "S");
    EXPECT_TRUE(r->facing.isApprox((room->scene.sources[0].position - r->position).normalized()));
}

TEST(Seating, RowsCountFromTheFirstSourceWhereverItIs) {
    const std::string toml =
        "[model]\nmesh = \"room.obj\"\n"
        "[[source]]\nname = \"S\"\nposition = [5, 1.5, 18]\n"
        "[[seating]]\nzone = \"stalls\"\nsurfaces = [\"floor\"]\n";
    Diagnostics diag;
    auto room = Load("rows_reversed", toml, BoxObj(10, 5, 20), diag);
    ASSERT_TRUE(room) << diag.ToString();
    // Looking along -z from the source, the right-hand side is +x: seat 1 at x = 0.
    const Receiver* r = Find(*room, "stalls-r02-s02");
    ASSERT_NE(r, nullptr);
    EXPECT_TRUE(r->position.isApprox(Vec3(1, 1.2, 19))) << r->position.transpose();
}

TEST(Seating, NamesAndPositionsAreStableAcrossReruns) {
    const std::string toml =
        "[model]\nmesh = \"room.obj\"\n"
        "[[source]]\nname = \"S\"\nposition = [5, 1.5, 2]\n"
        "[[seating]]\nzone = \"z\"\nsurfaces = [\"rake\"]\nspacing_m = 1.3\n";
    Diagnostics a, b;
    auto r1 = Load("stable1", toml, RakedRoomObj(), a);
    auto r2 = Load("stable2", toml, RakedRoomObj(), b);
    ASSERT_TRUE(r1 && r2) << a.ToString();
    ASSERT_EQ(r1->scene.receivers.size(), r2->scene.receivers.size());
    for (size_t i = 0; i < r1->scene.receivers.size(); ++i) {
        EXPECT_EQ(r1->scene.receivers[i].name, r2->scene.receivers[i].name);
        EXPECT_EQ(r1->scene.receivers[i].position, r2->scene.receivers[i].position);
    }
}

// On a raked floor y = z / 10 every seat is ear_height above the floor under it (analytic).
TEST(Seating, RakedFloorSeatsFollowTheSlope) {
    const std::string toml =
        "[model]\nmesh = \"room.obj\"\n"
        "[[source]]\nname = \"S\"\nposition = [5, 1.5, 1]\n"
        "[[seating]]\nzone = \"rake\"\nsurfaces = [\"rake\"]\near_height_m = 1.1\n";
    Diagnostics diag;
    auto room = Load("raked", toml, RakedRoomObj(), diag);
    ASSERT_TRUE(room) << diag.ToString();
    ASSERT_GT(room->scene.receivers.size(), 100u);
    for (const auto& r : room->scene.receivers) EXPECT_NEAR(r.position.y(), r.position.z() / 10 + 1.1, 1e-9) << r.name;
}

TEST(Seating, GroupThatNamesNoFacesIsAnErrorAtTheBlock) {
    const std::string toml =
        "[model]\nmesh = \"room.obj\"\n"
        "[[source]]\nname = \"S\"\nposition = [5, 1.5, 2]\n"
        "[[seating]]\nzone = \"stalls\"\nsurfaces = [\"flor\"]\n";
    Diagnostics diag;
    std::string path;
    EXPECT_FALSE(Load("no_group", toml, BoxObj(10, 5, 20), diag, &path));
    EXPECT_TRUE(HasError(diag, path, 7, "seating surface 'flor' of zone 'stalls' names no faces in room.obj (did you mean \"floor\"?)"));
}

TEST(Seating, ZoneWhoseSeatsAreAllDroppedIsAnError) {
    // Ear height 2.45 m in a 2.5 m high room: every seat is within 0.1 m of the ceiling.
    const std::string toml =
        "[model]\nmesh = \"room.obj\"\n"
        "[[source]]\nname = \"S\"\nposition = [5, 1.5, 2]\n"
        "[[seating]]\nzone = \"stalls\"\nsurfaces = [\"floor\"]\near_height_m = 2.45\n";
    Diagnostics diag;
    std::string path;
    EXPECT_FALSE(Load("all_dropped", toml, BoxObj(10, 2.5, 20), diag, &path));
    EXPECT_TRUE(test::HasMessage(diag, Severity::kWarning, path, 7, "231 of 231 generated seats of zone 'stalls' dropped"));
    EXPECT_TRUE(HasError(diag, path, 7, "seating zone 'stalls' produced no seats"));
}

TEST(Seating, ExplicitPositionsOutsideOrTooCloseToASurfaceAreErrors) {
    const std::string toml =
        "[model]\nmesh = \"room.obj\"\n"
        "[[source]]\nname = \"S\"\nposition = [5, 1.5, 25]\n"       // 3-5: outside
        "[[source]]\nname = \"T\"\nposition = [5, 0.05, 2]\n"       // 6-8: 5 cm above the floor
        "[[receiver]]\nname = \"R\"\nposition = [-1, 1.2, 8]\n"     // 9-11: outside
        "[[receiver]]\nname = \"Q\"\nposition = [9.95, 1.2, 8]\n"   // 12-14: 5 cm from a wall
        "[[receiver]]\nname = \"P\"\nposition = [5, 1.2, 8]\n";     // fine
    Diagnostics diag;
    std::string path;
    EXPECT_FALSE(Load("explicit", toml, BoxObj(10, 5, 20), diag, &path));
    EXPECT_TRUE(HasError(diag, path, 4, "source 'S' at (5, 1.5, 25) is outside the room"));
    EXPECT_TRUE(HasError(diag, path, 7, "source 'T' at (5, 0.05, 2) is only 0.05 m from the nearest surface"));
    EXPECT_TRUE(HasError(diag, path, 10, "receiver 'R' at (-1, 1.2, 8) is outside the room"));
    EXPECT_TRUE(HasError(diag, path, 13, "receiver 'Q' at (9.95, 1.2, 8) is only 0.05 m from the nearest surface"));
    EXPECT_EQ(diag.ErrorCount(), 4) << diag.ToString();
}

// Positions in the error are given back in the model's own units and axes.
TEST(Seating, ErrorsQuoteModelCoordinatesForAZUpMillimetreModel) {
    const std::string toml =
        "[model]\nmesh = \"room.obj\"\nunits = \"mm\"\nup = \"z\"\n"
        "[[source]]\nname = \"S\"\nposition = [5000, -2000, 50]\n";  // 5 cm above the floor
    Diagnostics diag;
    std::string path;
    EXPECT_FALSE(Load("zup_mm", toml + "[[receiver]]\nposition = [5000, -8000, 1200]\n",
                      BoxObj(10, 5, 20, 1000.0, true), diag, &path));
    EXPECT_TRUE(HasError(diag, path, 6, "source 'S' at (5000, -2000, 50) is only 0.05 m from the nearest surface"));
}

TEST(Seating, ExplicitReceiverMayNotTakeAGeneratedSeatName) {
    const std::string toml =
        "[model]\nmesh = \"room.obj\"\n"
        "[[source]]\nname = \"S\"\nposition = [5, 1.5, 2]\n"
        "[[receiver]]\nname = \"stalls-r02-s02\"\nposition = [5, 1.2, 8]\n"
        "[[seating]]\nzone = \"stalls\"\nsurfaces = [\"floor\"]\n";
    Diagnostics diag;
    std::string path;
    EXPECT_FALSE(Load("name_clash", toml, BoxObj(10, 5, 20), diag, &path));
    EXPECT_TRUE(HasError(diag, path, 7, "receiver name 'stalls-r02-s02' is also the name of a generated seat"));
}

// The demo theatre and the shoebox scenes shipped in scenes/ load cleanly; the mm / z-up
// shoebox equals the m shoebox.
TEST(Seating, ShippedScenesLoad) {
    Diagnostics diag;
    auto theatre = LoadRoom(test::SourcePath("scenes/theatre/scene.toml"), diag);
    ASSERT_TRUE(theatre) << diag.ToString();
    std::map<std::string, int> perZone;
    for (const auto& r : theatre->scene.receivers) perZone[r.zone] += r.generated;
    for (const char* zone : {"stalls", "under-balcony", "balcony"}) EXPECT_GT(perZone[zone], 20) << zone;
    EXPECT_NE(Find(*theatre, "stalls-r01-s01"), nullptr);

    auto m = LoadRoom(test::SourcePath("scenes/shoebox/scene.toml"), diag);
    auto mm = LoadRoom(test::SourcePath("scenes/shoebox_mm/scene.toml"), diag);
    ASSERT_TRUE(m && mm) << diag.ToString();
    EXPECT_NEAR(m->geometry.Volume(), 3000.0, 1e-6);
    EXPECT_NEAR(mm->geometry.Volume(), 3000.0, 1e-6);
    EXPECT_LT((m->scene.receivers[0].position - mm->scene.receivers[0].position).norm(), 1e-9);
}

}  // namespace
}  // namespace hallwright
