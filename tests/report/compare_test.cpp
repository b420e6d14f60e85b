// `compare`: reading run tables, matching seats by name and by position, JND differences by
// hand on a tiny two-run fixture, and the command's files and errors.
#include <gtest/gtest.h>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <sstream>

#include "cli/cli_support.h"
#include "hallwright/run_compare.h"
#include "test_support.h"

namespace hallwright {
namespace {

const char* kParamHeader = "source,receiver,zone,band,parameter,value,ci95,unit,note\n";
const char* kSeatHeader = "source,receiver,zone,x,y,z,direct_occluded,C80_M,C80_M_ci95\n";

/* Run A: seats s1, s2 in "front", s3 in "rear". Run B: s1 and s2 by name, s3 renamed "s3b"
   and moved by 3 cm (matched by position), plus "extra" (unmatched). */
void WriteRuns(const std::string& a, const std::string& b) {
    test::WriteFile(a, "parameters.csv",
                    std::string(kParamHeader) +
                        "stage,s1,front,avg,C80_M,1.0,0.3,dB,\n"
                        "stage,s1,front,avg,EDT_M,2.0,0.04,s,\n"
                        "stage,s1,front,1000,G,5.0,0.4,dB,\n"
                        "stage,s1,front,avg,T30_r,0.99,,ratio,\n"
                        "stage,s2,front,avg,C80_M,2.0,0.4,dB,\n"
                        "stage,s2,front,avg,EDT_M,1.8,0.04,s,\n"
                        "stage,s3,rear,avg,C80_M,-1.0,0.5,dB,\"a note, with a comma\"\n");
    test::WriteFile(a, "seats.csv",
                    std::string(kSeatHeader) + "stage,s1,front,1,1.2,5,0,1.0,0.3\nstage,s2,front,2,1.2,5,0,2.0,0.4\n"
                                               "stage,s3,rear,3,1.2,9,0,-1.0,0.5\n");
    test::WriteFile(b, "parameters.csv",
                    std::string(kParamHeader) +
                        "stage,s1,front,avg,C80_M,2.5,0.4,dB,\n"
                        "stage,s1,front,avg,EDT_M,1.8,0.03,s,\n"
                        "stage,s1,front,1000,G,4.0,0.3,dB,\n"
                        "stage,s2,front,avg,C80_M,3.0,0.3,dB,\n"
                        "stage,s2,front,avg,EDT_M,1.7,,s,\n"
                        "stage,s3b,rear,avg,C80_M,-0.5,0.5,dB,\n"
                        "stage,extra,rear,avg,C80_M,0.0,0.5,dB,\n");
    test::WriteFile(b, "seats.csv",
                    std::string(kSeatHeader) + "stage,s1,front,1,1.2,5,0,2.5,0.4\nstage,s2,front,2,1.2,5,0,3.0,0.3\n"
                                               "stage,s3b,rear,3.03,1.2,9,0,-0.5,0.5\nstage,extra,rear,3.2,1.2,9,0,0,0.5\n");
}

const SeatChange* FindSeat(const RunComparison& c, const std::string& r, const std::string& p, int band = 0) {
    for (const auto& s : c.seats)
        if (s.receiver == r && s.parameter == p && s.band == band) return &s;
    return nullptr;
}

TEST(CompareRuns, MatchesByNameAndPositionAndCountsJnds) {
    const std::string a = test::TempDir("compare-a"), b = test::TempDir("compare-b");
    WriteRuns(a, b);
    Diagnostics diag;
    auto ra = ReadRun(a, diag), rb = ReadRun(b, diag);
    ASSERT_TRUE(ra && rb) << diag.ToString();
    EXPECT_EQ(ra->parameters[6].note, "a note, with a comma");
    const RunComparison c = CompareRuns(*ra, *rb, CompareOptions{});
    EXPECT_EQ(c.matchedByName, 2);
    EXPECT_EQ(c.matchedByPosition, 1);
    ASSERT_EQ(c.unmatchedB.size(), 1u);
    EXPECT_EQ(c.unmatchedB[0], "stage/extra");
    EXPECT_TRUE(c.unmatchedA.empty());

    // C80 at s1: 2.5 - 1.0 = 1.5 dB; JND 1 dB (ISO 3382-1 Table A.1) -> 1.5 JND;
    // interval sqrt(0.3^2 + 0.4^2) = 0.5 dB -> 0.5 JND (independent runs).
    const SeatChange* c80 = FindSeat(c, "s1", "C80_M");
    ASSERT_NE(c80, nullptr);
    EXPECT_DOUBLE_EQ(c80->difference, 1.5);
    EXPECT_DOUBLE_EQ(c80->differenceJnd, 1.5);
    EXPECT_NEAR(c80->ci95Jnd, 0.5, 1e-12);
    // EDT at s1: 1.8 - 2.0 = -0.2 s; relative JND 5 % of the mean 1.9 s = 0.095 s -> -2.105 JND;
    // interval sqrt(0.04^2 + 0.03^2) = 0.05 s -> 0.526 JND.
    const SeatChange* edt = FindSeat(c, "s1", "EDT_M");
    ASSERT_NE(edt, nullptr);
    EXPECT_NEAR(edt->differenceJnd, -0.2 / 0.095, 1e-9);
    EXPECT_NEAR(edt->ci95Jnd, 0.05 / 0.095, 1e-9);
    // A band row: G at 1 kHz, -1 dB = -1 JND.
    const SeatChange* g = FindSeat(c, "s1", "G", 1000);
    ASSERT_NE(g, nullptr);
    EXPECT_DOUBLE_EQ(g->differenceJnd, -1.0);
    // No JND for the fit quality T30_r: left out.
    EXPECT_EQ(FindSeat(c, "s1", "T30_r"), nullptr);
    // Position match: s3 -> s3b (3 cm apart), +0.5 dB.
    const SeatChange* s3 = FindSeat(c, "s3", "C80_M");
    ASSERT_NE(s3, nullptr);
    EXPECT_TRUE(s3->matchedByPosition);
    EXPECT_EQ(s3->receiverB, "s3b");
    EXPECT_DOUBLE_EQ(s3->differenceJnd, 0.5);
    // A missing interval in one run gives no interval, not a wrong one.
    EXPECT_TRUE(std::isnan(FindSeat(c, "s2", "EDT_M")->ci95Jnd));

    // Zone "front", C80: means 1.5 -> 2.75, +1.25 JND; interval per run = mean seat ci95
    // (0.35 and 0.35), combined sqrt(2) * 0.35 = 0.495 JND.
    const ZoneChange* front = nullptr;
    for (const auto& z : c.zones)
        if (z.zone == "front" && z.parameter == "C80_M") front = &z;
    ASSERT_NE(front, nullptr);
    EXPECT_EQ(front->nSeats, 2);
    EXPECT_DOUBLE_EQ(front->a, 1.5);
    EXPECT_DOUBLE_EQ(front->b, 2.75);
    EXPECT_DOUBLE_EQ(front->differenceJnd, 1.25);
    EXPECT_NEAR(front->ci95Jnd, std::sqrt(2.0) * 0.35, 1e-12);

    // With a tolerance below 3 cm, s3 is no longer matched.
    CompareOptions tight;
    tight.positionToleranceM = 0.02;
    const RunComparison t = CompareRuns(*ra, *rb, tight);
    EXPECT_EQ(t.matchedByPosition, 0);
    EXPECT_EQ(t.unmatchedA.size(), 1u);

    // Sentences: one per (source, zone); front names C80 (> 1 JND) and EDT (-2.1 JND at s1 and
    // -1.1 at s2: mean 1.9 -> 1.75 = -1.58 JND); rear changes nothing by more than one JND.
    const auto sentences = ZoneChangeSentences(c);
    ASSERT_EQ(sentences.size(), 2u);
    EXPECT_NE(sentences[0].find("In front (source stage), option B changes C80 +1.25 dB (1.2 JND"), std::string::npos)
        << sentences[0];
    EXPECT_NE(sentences[0].find("clearer"), std::string::npos);
    EXPECT_NE(sentences[0].find("EDT −0.150 s"), std::string::npos) << sentences[0];
    EXPECT_NE(sentences[1].find("no single-number value"), std::string::npos) << sentences[1];

    const std::string csv = FormatCompareCsv(c);
    EXPECT_EQ(csv.substr(0, csv.find('\n')),
              "source,receiver,zone,parameter,band,a,b,difference,difference_jnd,ci95_jnd");
    EXPECT_NE(csv.find("\nstage,s1,front,C80_M,avg,1,2.5,1.5,1.5,0.5\n"), std::string::npos) << csv;
    EXPECT_NE(csv.find("\nstage,s1,front,G,1000,5,4,-1,-1,"), std::string::npos);
    EXPECT_NE(csv.find("\nstage,(zone mean),front,C80_M,avg,1.5,2.75,1.25,1.25,"), std::string::npos);
    const std::string html = RenderCompareReport(c, a, b);
    EXPECT_EQ(html.find("http://"), std::string::npos);
    EXPECT_EQ(html.find("https://"), std::string::npos);
    EXPECT_NE(html.find("data-seat=\"s1\""), std::string::npos);
}

TEST(CompareRuns, GarbledFilesNameFileAndLine) {
    const std::string a = test::TempDir("compare-bad");
    test::WriteFile(a, "parameters.csv", std::string(kParamHeader) + "stage,s1,front,avg,C80_M,1.0,0.3,dB,\n"
                                                                     "stage,s1,front,avg,C80_M,abc,0.3,dB,\n"
                                                                     "stage,s1,front,500\n");
    test::WriteFile(a, "seats.csv", "source,receiver\nstage,s1\n");
    Diagnostics diag;
    EXPECT_FALSE(ReadRun(a, diag));
    const std::string text = diag.ToString();
    EXPECT_NE(text.find("parameters.csv:3"), std::string::npos) << text;
    EXPECT_NE(text.find("not a number"), std::string::npos) << text;
    EXPECT_NE(text.find("parameters.csv:4"), std::string::npos) << text;
    EXPECT_NE(text.find("seats.csv:1"), std::string::npos) << text;
    EXPECT_NE(text.find("no column \"zone\""), std::string::npos) << text;
    Diagnostics missing;
    EXPECT_FALSE(ReadRun(a + "/nowhere", missing));
    EXPECT_NE(missing.ToString().find("nowhere/parameters.csv"), std::string::npos);
}

TEST(CompareCommand, WritesCsvAndHtmlAndReportsErrors) {
    const std::string a = test::TempDir("compare-cli-a"), b = test::TempDir("compare-cli-b");
    const std::string out = test::TempDir("compare-cli-out");
    WriteRuns(a, b);
    auto r = test::RunHallwright("compare '" + a + "' '" + b + "' --out '" + out + "'");
    ASSERT_EQ(r.exitCode, 0) << r.err;
    EXPECT_NE(r.out.find("2 seats matched by name, 1 by position"), std::string::npos) << r.out;
    std::ifstream csv(out + "/compare.csv"), html(out + "/compare.html");
    EXPECT_TRUE(csv.good());
    EXPECT_TRUE(html.good());
    EXPECT_FALSE(std::ifstream(out + "/compare.csv.partial").good());
    auto bad = test::RunHallwright("compare '" + a + "' '" + a + "/missing' --out '" + out + "'");
    EXPECT_EQ(bad.exitCode, 1);
    EXPECT_NE(bad.err.find("missing/parameters.csv"), std::string::npos) << bad.err;
    EXPECT_EQ(test::RunHallwright("compare '" + a + "'").exitCode, 2);
    auto help = test::RunHallwright("compare --help");
    EXPECT_EQ(help.exitCode, 0);
    EXPECT_NE(help.out.find("Example:"), std::string::npos);
}

}  // namespace
}  // namespace hallwright

namespace hallwright {
namespace {

std::string ReadAll(const std::string& path) {
    std::ifstream in(path);
    std::stringstream ss;
    ss << in.rdbuf();
    return ss.str();
}

/* Two runs of the shoebox that differ only in the wall material (alpha 0.1 against 0.3):
   compare finds the seat by name, and T30 falls by many JNDs, in the direction Eyring's
   formula gives (Eyring 1930: T falls from 3.2 s to about 1.0 s at 1 kHz; REFERENCES Part A 2). */
TEST(CompareCommand, TwoScenesThatDifferByOneMaterial) {
    namespace fs = std::filesystem;
    const std::string base = test::TempDir("compare-material");
    for (const char* option : {"a", "b"}) {
        const fs::path dir = fs::path(base) / (std::string("scene-") + option);
        fs::create_directories(dir);
        for (const char* f : {"scene.toml", "room.obj"})
            fs::copy_file(test::SourcePath(std::string("scenes/shoebox/") + f), dir / f);
        std::string materials = ReadAll(test::SourcePath("scenes/shoebox/materials.csv"));
        if (std::string(option) == "b") {
            // The same material name with alpha 0.3 in every band.
            const size_t row = materials.find("\nuniform_a10,");
            ASSERT_NE(row, std::string::npos);
            materials.replace(row + 1, std::string("uniform_a10,0.1,0.1,0.1,0.1,0.1,0.1").size(),
                              "uniform_a10,0.3,0.3,0.3,0.3,0.3,0.3");
            materials.replace(materials.find(",0.1,0.1,0,0,,,,", row), std::string(",0.1,0.1,0,0,,,,").size(),
                              ",0.3,0.3,0,0,,,,");
        }
        test::WriteFile(dir.string(), "materials.csv", materials);
        auto r = test::RunHallwright("simulate '" + (dir / "scene.toml").string() + "' --out '" + base + "/run-" +
                                     option + "' --rays 4000 --no-wav --quiet");
        ASSERT_EQ(r.exitCode, 0) << r.err;
    }
    auto r = test::RunHallwright("compare '" + base + "/run-a' '" + base + "/run-b' --out '" + base + "/cmp'");
    ASSERT_EQ(r.exitCode, 0) << r.err;
    EXPECT_NE(r.out.find("1 seats matched by name"), std::string::npos) << r.out;
    Diagnostics diag;
    auto a = ReadRun(base + "/run-a", diag), b = ReadRun(base + "/run-b", diag);
    ASSERT_TRUE(a && b) << diag.ToString();
    EXPECT_EQ(a->modelUp, "z");
    const RunComparison c = CompareRuns(*a, *b, CompareOptions{});
    const SeatChange* t30 = FindSeat(c, "R", "T30_M");
    ASSERT_NE(t30, nullptr);
    EXPECT_LT(t30->b, 0.6 * t30->a);          // Eyring: 1.0 s against 3.2 s
    EXPECT_LT(t30->differenceJnd, -10.0);     // far more than one JND (5 % relative)
    const SeatChange* c80 = FindSeat(c, "R", "C80_M");
    ASSERT_NE(c80, nullptr);
    EXPECT_GT(c80->difference, 0.0);          // less reverberant: clearer
    const std::string csv = ReadAll(base + "/cmp/compare.csv");
    EXPECT_NE(csv.find("\nS,R,room,T30_M,avg,"), std::string::npos);
    const std::string html = ReadAll(base + "/cmp/compare.html");
    EXPECT_NE(html.find("In room (source S), option B changes"), std::string::npos);
    EXPECT_EQ(html.find("https://"), std::string::npos);
}

}  // namespace
}  // namespace hallwright
