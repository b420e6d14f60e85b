// `hallwright simulate` end to end on a small two-zone box: file schemas, byte identity at
// 1 and 2 threads, seeds, Ctrl-C, and --target-ci.
#include <signal.h>
#include <sys/wait.h>
#include <unistd.h>

#include <filesystem>
#include <fstream>
#include <set>
#include <sstream>

#include <gtest/gtest.h>
#include <nlohmann/json.hpp>

#include "cli/cli_support.h"
#include "test_support.h"

namespace hallwright {
namespace {

namespace fs = std::filesystem;
using test::RunHallwright;

const char* kScene = "tests/data/small_box/scene.toml";

std::string Slurp(const fs::path& p) {
    std::ifstream in(p, std::ios::binary);
    std::stringstream ss;
    ss << in.rdbuf();
    return ss.str();
}

std::string FirstLine(const fs::path& p) {
    std::ifstream in(p);
    std::string line;
    std::getline(in, line);
    return line;
}

/* Every regular file under dir, relative path -> bytes. */
std::map<std::string, std::string> Files(const fs::path& dir) {
    std::map<std::string, std::string> out;
    for (const auto& e : fs::recursive_directory_iterator(dir))
        if (e.is_regular_file()) out[fs::relative(e.path(), dir).string()] = Slurp(e.path());
    return out;
}

TEST(SimulateCommand, WritesTheDocumentedFilesAndColumns) {
    const std::string out = test::TempDir("simulate-schema");
    auto r = RunHallwright(std::string("simulate ") + kScene + " --out '" + out + "' --paths --histograms --quiet");
    ASSERT_EQ(r.exitCode, 0) << r.err;
    EXPECT_EQ(FirstLine(out + "/parameters.csv"), "source,receiver,zone,band,parameter,value,ci95,unit,note");
    EXPECT_EQ(FirstLine(out + "/seats.csv"),
              "source,receiver,zone,x,y,z,direct_occluded,EDT_M,EDT_M_ci95,T30_M,T30_M_ci95,C80_M,C80_M_ci95,"
              "D50_M,D50_M_ci95,Ts_M,Ts_M_ci95,G_M,G_M_ci95,LF_M,LF_M_ci95,STI,STI_ci95");
    EXPECT_EQ(FirstLine(out + "/zones.csv"), "source,zone,parameter,band,n_seats,mean,sd,min,max,ci95");
    EXPECT_EQ(FirstLine(out + "/zone-differences.csv"),
              "source,zone_a,zone_b,parameter,band,difference,difference_jnd,ci95_jnd");
    EXPECT_EQ(FirstLine(out + "/paths/src__front-a.csv"),
              "order,delay_s,e63,e125,e250,e500,e1000,e2000,e4000,e8000,dir_x,dir_y,dir_z,faces,groups");
    EXPECT_EQ(FirstLine(out + "/histograms/src__front-a.csv").substr(0, 24), "time_s,tracer_63,tracer_");
    for (const char* seat : {"front-a", "front-b", "rear-a", "rear-b"}) {
        EXPECT_TRUE(fs::exists(out + "/ir/mono/src__" + std::string(seat) + ".wav")) << seat;
        EXPECT_TRUE(fs::exists(out + "/ir/mono/src__" + std::string(seat) + ".wav.json")) << seat;
    }
    // Spatial files for two seats per zone (here every seat): AmbiX (4 channels) and binaural (2).
    for (const auto& [dir, layout, channels] :
         {std::tuple{"ambix", "ambix-acn-sn3d", 4}, std::tuple{"binaural", "binaural-lr", 2}}) {
        auto sidecar = nlohmann::json::parse(Slurp(out + "/ir/" + dir + "/src__rear-b.wav.json"));
        EXPECT_EQ(sidecar["channel_layout"].get<std::string>(), layout);
        EXPECT_EQ(sidecar["channels"].get<int>(), channels);
    }
    auto run = nlohmann::json::parse(Slurp(out + "/run.json"));
    for (const char* key : {"versions", "scene", "mesh", "settings", "seed", "sources", "calibration", "timings_s",
                            "warnings", "complete", "cautions"})
        EXPECT_TRUE(run.contains(key)) << key;
    EXPECT_EQ(run["scene"]["sha256"].get<std::string>().size(), 64u);
    EXPECT_TRUE(run["complete"].get<bool>());
    EXPECT_EQ(run["sources"][0]["rays"].get<int>(), 4000);
    // One row per (source, seat) in seats.csv; zone rows for both zones; one zone pair.
    const std::string seats = Slurp(out + "/seats.csv");
    EXPECT_EQ(std::count(seats.begin(), seats.end(), '\n'), 5);
    const std::string zones = Slurp(out + "/zones.csv");
    EXPECT_NE(zones.find("src,front,C80,1000,2,"), std::string::npos);
    EXPECT_NE(zones.find("src,rear,C80_M,avg,2,"), std::string::npos);
    EXPECT_NE(Slurp(out + "/zone-differences.csv").find("src,front,rear,G_M,avg,"), std::string::npos);
}

// Determinism (architecture rule): the same inputs and seed give byte-identical files at any
// thread count; only run.json's timings differ.
TEST(SimulateCommand, ByteIdenticalAtOneAndTwoThreads) {
    const std::string a = test::TempDir("simulate-threads-1"), b = test::TempDir("simulate-threads-2");
    auto ra = RunHallwright(std::string("simulate ") + kScene + " --out '" + a + "' --threads 1 --quiet --paths");
    auto rb = RunHallwright(std::string("simulate ") + kScene + " --out '" + b + "' --threads 2 --quiet --paths");
    ASSERT_EQ(ra.exitCode, 0) << ra.err;
    ASSERT_EQ(rb.exitCode, 0) << rb.err;
    auto fa = Files(a), fb = Files(b);
    ASSERT_EQ(fa.size(), fb.size());
    for (const auto& [name, bytes] : fa) {
        ASSERT_TRUE(fb.count(name)) << name;
        if (name == "run.json") {
            auto ja = nlohmann::json::parse(bytes), jb = nlohmann::json::parse(fb[name]);
            ja.erase("timings_s");
            jb.erase("timings_s");
            EXPECT_EQ(ja, jb);
        } else {
            EXPECT_TRUE(bytes == fb[name]) << name << " differs between 1 and 2 threads";
        }
    }
}

TEST(SimulateCommand, DifferentSeedsGiveDifferentTracerResults) {
    const std::string a = test::TempDir("simulate-seed-a"), b = test::TempDir("simulate-seed-b");
    ASSERT_EQ(RunHallwright(std::string("simulate ") + kScene + " --out '" + a + "' --no-wav --quiet").exitCode, 0);
    ASSERT_EQ(RunHallwright(std::string("simulate ") + kScene + " --out '" + b + "' --no-wav --quiet --seed 8").exitCode, 0);
    EXPECT_NE(Slurp(a + "/seats.csv"), Slurp(b + "/seats.csv"));
}

// SIGINT mid-run: exit code 3, no half-written file (every file present is complete:
// no temporary names left, run.json parses and says it was interrupted).
TEST(SimulateCommand, InterruptLeavesNoPartialFile) {
    const std::string out = test::TempDir("simulate-sigint");
    const std::string bin = std::string(HW_BINARY_DIR) + "/hallwright";
    const std::string scene = test::SourcePath(kScene);
    pid_t pid = fork();
    ASSERT_GE(pid, 0);
    if (pid == 0) {
        freopen("/dev/null", "w", stderr);
        freopen("/dev/null", "w", stdout);
        execl(bin.c_str(), bin.c_str(), "simulate", scene.c_str(), "--out", out.c_str(), "--rays", "4000000",
              "--quiet", static_cast<char*>(nullptr));
        _exit(127);
    }
    usleep(700 * 1000);
    kill(pid, SIGINT);
    int status = 0;
    waitpid(pid, &status, 0);
    ASSERT_TRUE(WIFEXITED(status));
    EXPECT_EQ(WEXITSTATUS(status), 3);
    for (const auto& e : fs::recursive_directory_iterator(out)) {
        const std::string name = e.path().filename().string();
        EXPECT_EQ(name.find(".partial"), std::string::npos) << name;
        EXPECT_EQ(name.find(".tmp"), std::string::npos) << name;
    }
    auto run = nlohmann::json::parse(Slurp(out + "/run.json"));
    EXPECT_TRUE(run["interrupted"].get<bool>());
    EXPECT_FALSE(run["complete"].get<bool>());
    EXPECT_EQ(run["sources_missing"][0].get<std::string>(), "src");
}

/* Largest C80_M_ci95 in a seats.csv. */
double WorstC80Interval(const std::string& seatsCsv) {
    std::istringstream in(seatsCsv);
    std::string line;
    std::getline(in, line);
    double worst = 0;
    while (std::getline(in, line)) {
        std::vector<std::string> cells;
        std::stringstream ss(line);
        std::string cell;
        while (std::getline(ss, cell, ',')) cells.push_back(cell);
        worst = std::max(worst, std::stod(cells.at(12)));  // C80_M_ci95
    }
    return worst;
}

// --target-ci: a reachable target raises the rays until every seat's 95 % half-width meets it;
// a tighter target needs more rays.
TEST(SimulateCommand, TargetIntervalRaisesTheRaysAndIsMet) {
    const std::string loose = test::TempDir("simulate-target-loose"), tight = test::TempDir("simulate-target-tight");
    auto rl = RunHallwright(std::string("simulate ") + kScene + " --out '" + loose +
                            "' --no-wav --quiet --rays 2000 --target-ci C80=0.8 --max-rays 256000");
    auto rt = RunHallwright(std::string("simulate ") + kScene + " --out '" + tight +
                            "' --no-wav --quiet --rays 2000 --target-ci C80=0.4 --max-rays 256000");
    ASSERT_EQ(rl.exitCode, 0) << rl.err;
    ASSERT_EQ(rt.exitCode, 0) << rt.err;
    auto jl = nlohmann::json::parse(Slurp(loose + "/run.json")), jt = nlohmann::json::parse(Slurp(tight + "/run.json"));
    EXPECT_TRUE(jt["target_ci"]["not_converged"].empty());
    EXPECT_LE(WorstC80Interval(Slurp(loose + "/seats.csv")), 0.8);
    EXPECT_LE(WorstC80Interval(Slurp(tight + "/seats.csv")), 0.4);
    EXPECT_GT(jt["target_ci"]["extra_rays"]["src"].get<int64_t>(), jl["target_ci"]["extra_rays"]["src"].get<int64_t>());
    // An unreachable target within --max-rays is reported seat by seat, with the reason.
    const std::string capped = test::TempDir("simulate-target-capped");
    auto rc = RunHallwright(std::string("simulate ") + kScene + " --out '" + capped +
                            "' --no-wav --quiet --rays 2000 --target-ci C80=0.01 --max-rays 4000");
    ASSERT_EQ(rc.exitCode, 0) << rc.err;
    auto jc = nlohmann::json::parse(Slurp(capped + "/run.json"));
    ASSERT_EQ(jc["target_ci"]["not_converged"].size(), 4u);
    EXPECT_NE(jc["target_ci"]["not_converged"][0]["why"].get<std::string>().find("C80 ci95"), std::string::npos);
}

TEST(SimulateCommand, BadTargetIsACommandLineError) {
    auto r = RunHallwright(std::string("simulate ") + kScene + " --out /tmp/never --target-ci C81=0.5");
    EXPECT_EQ(r.exitCode, 2);
    EXPECT_NE(r.err.find("unknown parameter \"C81\""), std::string::npos) << r.err;
}

}  // namespace
}  // namespace hallwright
