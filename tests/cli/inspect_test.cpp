// `hallwright inspect`: the documented JSON keys, exit codes and file:line errors.
#include <gtest/gtest.h>
#include <nlohmann/json.hpp>

#include "cli/cli_support.h"
#include "test_support.h"

namespace hallwright {
namespace {

using test::RunHallwright;

// Shoebox 20 x 15 x 10 m, alpha = 0.1 (REFERENCES Part A §2): V = 3000 m^3, S = 1300 m^2,
// Eyring 3.224 s at 1 kHz with air (20 °C / 50 %), Sabine 3.381 s (computed values there).
TEST(InspectCommand, JsonSummaryOfTheShoebox) {
    auto r = RunHallwright("inspect scenes/shoebox/scene.toml --json");
    ASSERT_EQ(r.exitCode, 0) << r.err;
    auto j = nlohmann::json::parse(r.out);
    EXPECT_NEAR(j["volume_m3"].get<double>(), 3000.0, 1e-6);
    EXPECT_NEAR(j["surface_area_m2"].get<double>(), 1300.0, 1e-6);
    ASSERT_EQ(j["bands"].size(), 8u);
    EXPECT_EQ(j["bands"][4]["band_hz"].get<int>(), 1000);
    EXPECT_NEAR(j["bands"][4]["sabine_s"].get<double>(), 3.381, 0.002);
    EXPECT_NEAR(j["bands"][4]["eyring_s"].get<double>(), 3.224, 0.002);
}

TEST(InspectCommand, MillimetreZUpShoeboxEqualsTheMetreOne) {
    auto a = RunHallwright("inspect scenes/shoebox/scene.toml --json");
    auto b = RunHallwright("inspect scenes/shoebox_mm/scene.toml --json");
    ASSERT_EQ(a.exitCode, 0) << a.err;
    ASSERT_EQ(b.exitCode, 0) << b.err;
    auto ja = nlohmann::json::parse(a.out), jb = nlohmann::json::parse(b.out);
    EXPECT_NEAR(ja["volume_m3"].get<double>(), jb["volume_m3"].get<double>(), 1e-6);
    EXPECT_NEAR(ja["bands"][4]["eyring_s"].get<double>(), jb["bands"][4]["eyring_s"].get<double>(), 1e-9);
}

TEST(InspectCommand, BadInputExitsOneWithFileAndLine) {
    const std::string dir = test::TempDir("inspect-bad");
    test::WriteFile(dir, "scene.toml", "[model]\nmesh = \"missing.obj\"\nunits = \"furlong\"\n");
    auto r = RunHallwright("inspect '" + dir + "/scene.toml'");
    EXPECT_EQ(r.exitCode, 1);
    EXPECT_NE(r.err.find("scene.toml:3"), std::string::npos) << r.err;
}

TEST(InspectCommand, BadCommandLineExitsTwo) {
    EXPECT_EQ(RunHallwright("inspect").exitCode, 2);
    EXPECT_EQ(RunHallwright("no-such-command").exitCode, 2);
    auto help = RunHallwright("inspect --help");
    EXPECT_EQ(help.exitCode, 0);
    EXPECT_NE(help.out.find("Example:"), std::string::npos);
}

}  // namespace
}  // namespace hallwright
