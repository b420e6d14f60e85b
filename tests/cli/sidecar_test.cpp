// Sidecars of `hallwright simulate` as `analyze` reads them: the "up" vector of a z-up model,
// binaural files without a G reference, and tracer warnings shown once per run.
#include <algorithm>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include <unistd.h>

#include <gtest/gtest.h>
#include <nlohmann/json.hpp>

#include "cli/cli_support.h"
#include "hallwright/ir_sidecar.h"
#include "scene/scene_fixtures.h"
#include "test_support.h"

namespace hallwright {
namespace {

namespace fs = std::filesystem;
using test::RunHallwright;

nlohmann::json ReadJson(const fs::path& p) {
    std::ifstream in(p);
    return nlohmann::json::parse(in);
}

/* Value cell of one (band, parameter) row of an `analyze --csv` file; "?" when absent.
   Columns: source,receiver,zone,band,parameter,value,ci95,unit,note; no cell is quoted here. */
std::string CsvValue(const std::string& path, const std::string& band, const std::string& parameter) {
    std::ifstream in(path);
    std::string line;
    while (std::getline(in, line)) {
        std::vector<std::string> cells;
        std::stringstream ss(line);
        std::string cell;
        while (std::getline(ss, cell, ',')) cells.push_back(cell);
        if (cells.size() >= 6 && cells[3] == band && cells[4] == parameter) return cells[5];
    }
    return "?";
}

size_t Count(const std::string& text, const std::string& what) {
    size_t n = 0;
    for (size_t at = text.find(what); at != std::string::npos; at = text.find(what, at + 1)) ++n;
    return n;
}

/* A 10 x 10 x 4 m box lined with curtains (T30 0.19 s at 1 kHz here, so 0.4 s of IR decays
   far enough for analyze) written z-up (model x in [0,10], y in [-10,0], z in [0,4]);
   the source 2 m above the ears of two listeners facing +x: "ahead" has it 5 m in front
   (direction (5, 0, 2)/sqrt 29), "left" has it 3 m to its left (+y = z x x). Both get AmbiX
   and binaural files. */
const fs::path& ZUpRun() {
    static const fs::path out = [] {
        // Two tests share this run; ctest may run them at once in two processes: one folder each.
        const std::string dir = test::TempDir("sidecar_cli/zup-" + std::to_string(getpid()));
        test::WriteFile(dir, "box.obj", test::BoxObj(10, 4, 10, 1.0, /*zUp=*/true, "curtains"));
        test::WriteFile(dir, "scene.toml",
                        "title = \"z-up sidecars\"\n[model]\nmesh = \"box.obj\"\nup = \"z\"\n"
                        "[[source]]\nname = \"src\"\nposition = [8, -5, 3.2]\n"
                        "[[receiver]]\nname = \"ahead\"\nposition = [3, -5, 1.2]\nfacing = [1, 0, 0]\n"
                        "[[receiver]]\nname = \"left\"\nposition = [8, -8, 1.2]\nfacing = [1, 0, 0]\n"
                        "[simulation]\nrays = 2000\nimage_order = 1\nduration_s = 0.4\nseed = 3\n"
                        "[output]\nspatial_seats = [\"ahead\", \"left\"]\n");
        const fs::path run = fs::path(dir) / "run";
        const auto r = RunHallwright("simulate '" + dir + "/scene.toml' --out '" + run.string() + "' --quiet");
        EXPECT_EQ(r.exitCode, 0) << r.err;
        return run;
    }();
    return out;
}

// Every sidecar of the z-up run names the model's vertical, +z (scene_frame.cpp rotates the
// internal +y to it), so the reader needs no guess and the azimuths are the geometric ones:
// 0 for the source straight ahead, +90 deg for the source on the left (AmbiX, counter-
// clockwise; REFERENCES §7.1). Guessing from the vectors alone picks y for "ahead" (neither
// vector has a y component) and turns the lateral axis of LF by atan(2/5) = 21.8 deg.
TEST(SidecarUp, ZUpRunGivesTheAzimuthWithoutAGuess) {
    const fs::path& run = ZUpRun();
    for (const char* rel : {"ir/mono/src__ahead.wav.json", "ir/ambix/src__ahead.wav.json",
                            "ir/binaural/src__left.wav.json"})
        EXPECT_EQ(ReadJson(run / rel)["up"], nlohmann::json::array({0.0, 0.0, 1.0})) << rel;

    Diagnostics diag;
    const std::string ahead = (run / "ir/ambix/src__ahead.wav").string();
    auto a = ReadIrSidecar(ahead, diag);
    auto l = ReadIrSidecar((run / "ir/ambix/src__left.wav").string(), diag);
    ASSERT_TRUE(a && l) << diag.ToString();
    ASSERT_TRUE(a->sourceAzimuthDeg && l->sourceAzimuthDeg);
    EXPECT_NEAR(*a->sourceAzimuthDeg, 0.0, 1e-6);
    EXPECT_NEAR(*l->sourceAzimuthDeg, 90.0, 1e-6);
    EXPECT_TRUE(a->azimuthNote.empty()) << a->azimuthNote;

    // analyze takes that azimuth: no note, and LF as with --source-azimuth 0 given by hand.
    const std::string dir = test::TempDir("sidecar_cli/analyze_up");
    const auto fromSidecar = RunHallwright("analyze '" + ahead + "' --bands 1000 --csv '" + dir + "/a.csv'");
    ASSERT_EQ(fromSidecar.exitCode, 0) << fromSidecar.err;
    EXPECT_EQ(fromSidecar.out.find("up axis taken"), std::string::npos) << fromSidecar.out;
    const auto byHand = RunHallwright("analyze '" + ahead + "' --bands 1000 --source-azimuth 0 --csv '" + dir + "/b.csv'");
    ASSERT_EQ(byHand.exitCode, 0) << byHand.err;
    const std::string lf = CsvValue(dir + "/a.csv", "1000", "LF");
    ASSERT_NE(lf, "?");
    ASSERT_FALSE(lf.empty());
    EXPECT_EQ(lf, CsvValue(dir + "/b.csv", "1000", "LF"));

    // The same file with an older sidecar (no "up"): still analysed, the guess and its note.
    nlohmann::json old = ReadJson(ahead + ".json");
    old.erase("up");
    fs::copy_file(ahead, dir + "/old.wav");
    test::WriteFile(dir, "old.wav.json", old.dump(2));
    const auto guessed = RunHallwright("analyze '" + dir + "/old.wav' --bands 1000 --csv '" + dir + "/c.csv'");
    ASSERT_EQ(guessed.exitCode, 0) << guessed.err;
    EXPECT_NE(guessed.out.find("source azimuth from the sidecar: up axis taken as +y (no \"up\" key)"),
              std::string::npos) << guessed.out;
    EXPECT_NE(CsvValue(dir + "/c.csv", "1000", "LF"), lf);  // the guessed axis is the wrong one here
}

// G is not defined for a binaural file (its level follows the HRTF set, response.h): its
// sidecar has no reference energy, analyze says why G is missing, and --reference-energy is
// refused for a binaural analysis (which gives IACC only) but forces G of the left ear when
// that ear is analysed as mono. The other layouts keep their reference.
TEST(BinauralSidecar, NoReferenceEnergyAndAnalyzeSaysWhy) {
    const fs::path& run = ZUpRun();
    const nlohmann::json bin = ReadJson(run / "ir/binaural/src__ahead.wav.json");
    EXPECT_FALSE(bin.contains("reference_energy"));
    EXPECT_NE(bin.value("reference_energy_note", "").find("HRTF"), std::string::npos);
    EXPECT_TRUE(ReadJson(run / "ir/mono/src__ahead.wav.json").contains("reference_energy"));
    EXPECT_TRUE(ReadJson(run / "ir/ambix/src__ahead.wav.json").contains("reference_energy"));

    const std::string file = "'" + (run / "ir/binaural/src__ahead.wav").string() + "'";
    const std::string dir = test::TempDir("sidecar_cli/binaural");
    const auto plain = RunHallwright("analyze " + file + " --bands 1000 --csv '" + dir + "/p.csv'");
    ASSERT_EQ(plain.exitCode, 0) << plain.err;
    EXPECT_NE(plain.out.find("G not computed: a binaural analysis gives IACC only"), std::string::npos) << plain.out;
    EXPECT_EQ(CsvValue(dir + "/p.csv", "1000", "G"), "?");
    EXPECT_NE(CsvValue(dir + "/p.csv", "1000", "IACC_E"), "?");

    const auto refused = RunHallwright("analyze " + file + " --bands 1000 --reference-energy 7.9577e-4");
    EXPECT_EQ(refused.exitCode, 2);  // bad command line (README exit codes)
    EXPECT_NE(refused.err.find("--reference-energy"), std::string::npos) << refused.err;
    EXPECT_NE(refused.err.find("--channels mono"), std::string::npos) << refused.err;

    const auto mono = RunHallwright("analyze " + file + " --bands 1000 --channels mono --csv '" + dir + "/m.csv'");
    ASSERT_EQ(mono.exitCode, 0) << mono.err;
    EXPECT_NE(mono.out.find("G not computed: a binaural file's level follows its HRTF set"), std::string::npos)
        << mono.out;
    EXPECT_EQ(CsvValue(dir + "/m.csv", "1000", "G"), "");

    const auto forced = RunHallwright("analyze " + file + " --bands 1000 --channels mono --reference-energy 7.9577e-4"
                                      " --csv '" + dir + "/f.csv'");
    ASSERT_EQ(forced.exitCode, 0) << forced.err;
    EXPECT_EQ(forced.out.find("G not computed"), std::string::npos) << forced.out;
    EXPECT_NE(forced.out.find("G of the left ear"), std::string::npos) << forced.out;
    const std::string g = CsvValue(dir + "/f.csv", "1000", "G");
    ASSERT_FALSE(g.empty() || g == "?") << g;
    EXPECT_TRUE(std::isfinite(std::stod(g)));
}

// Two sources and a seat 0.1 m above the floor: the tracer cuts that seat's sphere for each
// source alike (the radius depends on the room and the ray count, not on the source) and
// says so each time; the run shows the warning once, on stderr and in run.json.
TEST(SimulateWarnings, SameTracerWarningForEverySourceShownOnce) {
    const std::string dir = test::TempDir("sidecar_cli/warn_once");
    test::WriteFile(dir, "box.obj", test::BoxObj(8, 4, 6));
    test::WriteFile(dir, "scene.toml",
                    "title = \"two sources\"\n[model]\nmesh = \"box.obj\"\n"
                    "[[source]]\nname = \"a\"\nposition = [2, 1.5, 3]\n"
                    "[[source]]\nname = \"b\"\nposition = [6, 1.5, 3]\n"
                    "[[receiver]]\nname = \"low\"\nposition = [4, 0.1, 2]\n"
                    "[[receiver]]\nname = \"mid\"\nposition = [4, 1.2, 4]\n"
                    "[simulation]\nrays = 2000\nimage_order = 1\nduration_s = 0.3\nseed = 3\n");
    const fs::path out = fs::path(dir) / "run";
    const auto r = RunHallwright("simulate '" + dir + "/scene.toml' --out '" + out.string() + "' --no-wav --quiet");
    ASSERT_EQ(r.exitCode, 0) << r.err;
    const std::string warning = "1 receiver(s) are so close to a surface that their sphere radius was cut";
    EXPECT_EQ(Count(r.err, warning), 1u) << r.err;

    const nlohmann::json j = ReadJson(out / "run.json");
    ASSERT_EQ(j["sources"].size(), 2u);  // both sources were traced
    const auto& warnings = j["warnings"];
    EXPECT_EQ(std::count_if(warnings.begin(), warnings.end(),
                            [&](const nlohmann::json& w) { return w.get<std::string>().find(warning) != std::string::npos; }),
              1);
    std::vector<std::string> texts;
    for (const auto& w : warnings) texts.push_back(w.get<std::string>());
    std::sort(texts.begin(), texts.end());
    EXPECT_EQ(std::adjacent_find(texts.begin(), texts.end()), texts.end()) << "a warning repeated in run.json";
}

}  // namespace
}  // namespace hallwright
