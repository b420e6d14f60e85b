// `hallwright analyze`: the long-form CSV of a WAV, values against analytic decays, empty
// values with their reasons, and command-line errors that name the option and the fix.
#include <gtest/gtest.h>

#include <cmath>
#include <fstream>
#include <map>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include "cli/cli_support.h"
#include "hallwright/wav.h"
#include "test_support.h"

namespace hallwright {
namespace {

using test::RunHallwright;

constexpr double kLn10x6 = 13.815510557964274;  // 6 ln 10: 60 dB of energy decay

/* Fixed-seed white noise under the energy envelope e^(-6 ln10 t / T) from 20 ms on, with an
   onset sample, plus stationary white noise `noiseDb` below the envelope's start (none when
   <= -900). An ideal exponential decay: its octave-band Schroeder curves are straight lines
   of slope -60/T dB/s (Schroeder 1965; ISO 3382-1 definition of T30). */
WavData Decay(double t, double lengthS, double noiseDb) {
    std::mt19937_64 rng(20261201);
    std::normal_distribution<double> gauss(0.0, 1.0);
    WavData w;
    w.sampleRate = 48000;
    w.channels = 1;
    const size_t n = static_cast<size_t>(lengthS * w.sampleRate);
    w.samples.resize(n);
    const double k = kLn10x6 / t, amp = 0.25, start = 0.02;
    const double noiseAmp = noiseDb > -900 ? amp * std::pow(10.0, noiseDb / 20.0) : 0.0;
    for (size_t i = 0; i < n; ++i) {
        const double tt = static_cast<double>(i) / w.sampleRate - start;
        double v = tt >= 0 ? amp * std::exp(-0.5 * k * tt) * gauss(rng) : 0.0;
        if (noiseAmp > 0) v += noiseAmp * gauss(rng);
        w.samples[i] = static_cast<float>(v);
    }
    w.samples[static_cast<size_t>(start * w.sampleRate)] = static_cast<float>(3 * amp);
    return w;
}

std::string WriteDecay(const std::string& dir, const std::string& name, double t, double lengthS, double noiseDb) {
    const std::string path = dir + "/" + name;
    Diagnostics diag;
    EXPECT_TRUE(WriteWav(path, Decay(t, lengthS, noiseDb), WavFormat::kFloat32, diag)) << diag.ToString();
    return path;
}

std::vector<std::string> SplitCsvLine(const std::string& line) {
    std::vector<std::string> out;
    std::string cell;
    bool quoted = false;
    for (size_t i = 0; i < line.size(); ++i) {
        const char c = line[i];
        if (quoted) {
            if (c == '"' && i + 1 < line.size() && line[i + 1] == '"') cell += '"', ++i;
            else if (c == '"') quoted = false;
            else cell += c;
        } else if (c == '"') {
            quoted = true;
        } else if (c == ',') {
            out.push_back(cell), cell.clear();
        } else {
            cell += c;
        }
    }
    out.push_back(cell);
    return out;
}

struct Csv {
    std::string header;
    std::map<std::pair<std::string, std::string>, std::vector<std::string>> rows;  // (band, parameter)
};

Csv ReadCsv(const std::string& path) {
    Csv csv;
    std::ifstream in(path);
    std::getline(in, csv.header);
    std::string line;
    while (std::getline(in, line)) {
        const auto cells = SplitCsvLine(line);
        if (cells.size() >= 9) csv.rows[{cells[3], cells[4]}] = cells;
    }
    return csv;
}

// A noise-free exponential decay T = 1.2 s: T30 at 1 kHz within 2 % of T (issue 7: the WAV
// path's tolerance for a deterministic carrier; one fixed seed of a 1.2 s noise decay in an
// octave band scatters T30 by a few 0.1 %, far inside it).
TEST(AnalyzeCommand, CsvOfAnExponentialDecay) {
    const std::string dir = test::TempDir("analyze-decay");
    const double t = 1.2;
    const std::string wav = WriteDecay(dir, "decay.wav", t, 1.4 * t, -1e9);
    const std::string csvPath = dir + "/out.csv";
    auto r = RunHallwright("analyze '" + wav + "' --csv '" + csvPath + "'");
    ASSERT_EQ(r.exitCode, 0) << r.err;
    EXPECT_NE(r.out.find("T30"), std::string::npos) << r.out;
    const Csv csv = ReadCsv(csvPath);
    EXPECT_EQ(csv.header, "source,receiver,zone,band,parameter,value,ci95,unit,note");
    const auto it = csv.rows.find({"1000", "T30"});
    ASSERT_NE(it, csv.rows.end());
    ASSERT_FALSE(it->second[5].empty()) << it->second[8];
    EXPECT_NEAR(std::stod(it->second[5]), t, 0.02 * t);
    EXPECT_EQ(it->second[7], "s");
    EXPECT_EQ(it->second[1], "decay");  // receiver: the file stem when there is no sidecar
    // No sidecar, no --reference-energy: G is empty, with the reason.
    const auto g = csv.rows.find({"1000", "G"});
    ASSERT_NE(g, csv.rows.end());
    EXPECT_TRUE(g->second[5].empty());
    EXPECT_NE(g->second[8].find("reference"), std::string::npos) << g->second[8];
    // Single numbers have band "avg".
    EXPECT_NE(csv.rows.find({"avg", "T30_M"}), csv.rows.end());
}

// Noise 30 dB below the start of the decay: ISO 3382 needs the bottom of the T30 range
// (-35 dB) 10 dB above the noise, so T30 is refused with the reason, EDT (-10 dB) is given.
TEST(AnalyzeCommand, ParameterWithoutDynamicRangeIsEmptyWithReason) {
    const std::string dir = test::TempDir("analyze-noisy");
    const std::string wav = WriteDecay(dir, "noisy.wav", 1.0, 2.0, -30.0);
    const std::string csvPath = dir + "/out.csv";
    auto r = RunHallwright("analyze '" + wav + "' --bands 1000 --csv '" + csvPath + "'");
    ASSERT_EQ(r.exitCode, 0) << r.err;
    const Csv csv = ReadCsv(csvPath);
    const auto t30 = csv.rows.find({"1000", "T30"});
    ASSERT_NE(t30, csv.rows.end());
    EXPECT_TRUE(t30->second[5].empty()) << t30->second[5];
    EXPECT_NE(t30->second[8].find("dB"), std::string::npos) << t30->second[8];
    const auto edt = csv.rows.find({"1000", "EDT"});
    ASSERT_NE(edt, csv.rows.end());
    EXPECT_FALSE(edt->second[5].empty()) << edt->second[8];
    EXPECT_EQ(csv.rows.count({"500", "T30"}), 0u);  // only the requested band
}

TEST(AnalyzeCommand, ErrorsNameTheFileOrOptionAndTheFix) {
    const std::string dir = test::TempDir("analyze-errors");
    {
        auto r = RunHallwright("analyze '" + dir + "/missing.wav'");
        EXPECT_NE(r.exitCode, 0);
        EXPECT_NE(r.err.find("missing.wav"), std::string::npos) << r.err;
    }
    const std::string wav = WriteDecay(dir, "mono.wav", 0.5, 0.8, -1e9);
    {
        auto r = RunHallwright("analyze '" + wav + "' --bands 600");
        EXPECT_EQ(r.exitCode, 2);
        EXPECT_NE(r.err.find("--bands"), std::string::npos) << r.err;
        EXPECT_NE(r.err.find("125"), std::string::npos) << r.err;  // lists the valid octaves
    }
    {
        auto r = RunHallwright("analyze '" + wav + "' --bands 4000-125");
        EXPECT_EQ(r.exitCode, 2);
        EXPECT_NE(r.err.find("--bands"), std::string::npos) << r.err;
    }
    {
        auto r = RunHallwright("analyze '" + wav + "' --channels quad");
        EXPECT_EQ(r.exitCode, 2);
        EXPECT_NE(r.err.find("--channels"), std::string::npos) << r.err;
        EXPECT_NE(r.err.find("ambix"), std::string::npos) << r.err;  // names the valid layouts
    }
    {
        // A mono file analysed as AmbiX: the error names the file and says what to use.
        auto r = RunHallwright("analyze '" + wav + "' --channels ambix");
        EXPECT_NE(r.exitCode, 0);
        EXPECT_NE(r.err.find("mono.wav"), std::string::npos) << r.err;
        EXPECT_NE(r.err.find("--channels mono"), std::string::npos) << r.err;
    }
    {
        auto r = RunHallwright("analyze '" + wav + "' --reference-energy -1");
        EXPECT_EQ(r.exitCode, 2);
        EXPECT_NE(r.err.find("--reference-energy"), std::string::npos) << r.err;
    }
}

}  // namespace
}  // namespace hallwright

namespace hallwright {
namespace {

/* The CSV row (band, parameter) of `analyze FILE ARGS --csv`, or empty cells. */
std::vector<std::string> AnalyzeRow(const std::string& wav, const std::string& args, const std::string& csvPath,
                                    const std::string& band, const std::string& parameter) {
    auto r = RunHallwright("analyze '" + wav + "' " + args + " --csv '" + csvPath + "'");
    EXPECT_EQ(r.exitCode, 0) << r.err;
    const Csv csv = ReadCsv(csvPath);
    const auto it = csv.rows.find({band, parameter});
    return it == csv.rows.end() ? std::vector<std::string>(9) : it->second;
}

// Files of a real run (the shoebox, 4000 rays): AmbiX gives LF (from W and the lateral
// figure-of-eight), binaural gives IACC_E (ISO 3382-1 Annex B) and no G (its level follows
// the HRTF set), --reference-energy overrides the sidecar (doubling it lowers G by 10 lg 2 =
// 3.0103 dB exactly, ISO 3382-1 A.2.1) and --source-azimuth turns the lateral axis.
TEST(AnalyzeCommand, SpatialFilesOfARealRun) {
    const std::string dir = test::TempDir("analyze-run");
    auto sim = RunHallwright("simulate scenes/shoebox/scene.toml --rays 4000 --quiet --out '" + dir + "/run'");
    ASSERT_EQ(sim.exitCode, 0) << sim.err;
    const std::string ambix = dir + "/run/ir/ambix/S__R.wav", binaural = dir + "/run/ir/binaural/S__R.wav";
    const std::string csv = dir + "/a.csv";

    const auto lf = AnalyzeRow(ambix, "--bands 1000", csv, "1000", "LF");
    ASSERT_FALSE(lf[5].empty()) << lf[8];
    const double lfValue = std::stod(lf[5]);
    EXPECT_GT(lfValue, 0.0);
    EXPECT_LT(lfValue, 1.0);
    EXPECT_EQ(lf[1], "R");  // names from the sidecar
    const auto g = AnalyzeRow(ambix, "--bands 1000", csv, "1000", "G");
    ASSERT_FALSE(g[5].empty()) << g[8];
    // The sidecar's reference is 1/(400 pi) (response.h); twice that is 3.0103 dB less G.
    const auto g2 = AnalyzeRow(ambix, "--bands 1000 --reference-energy 0.0015915494309189533", csv, "1000", "G");
    ASSERT_FALSE(g2[5].empty()) << g2[8];
    EXPECT_NEAR(std::stod(g[5]) - std::stod(g2[5]), 10 * std::log10(2.0), 2e-3);  // CSV rounding
    const auto turned = AnalyzeRow(ambix, "--bands 1000 --source-azimuth 90", csv, "1000", "LF");
    ASSERT_FALSE(turned[5].empty()) << turned[8];
    EXPECT_NE(turned[5], lf[5]);

    const auto iacc = AnalyzeRow(binaural, "--bands 1000", csv, "1000", "IACC_E");
    ASSERT_FALSE(iacc[5].empty()) << iacc[8];
    EXPECT_GE(std::stod(iacc[5]), 0.0);
    EXPECT_LE(std::stod(iacc[5]), 1.0);
    const auto gb = AnalyzeRow(binaural, "--bands 1000 --channels mono", csv, "1000", "G");
    EXPECT_TRUE(gb[5].empty()) << gb[5];
}

}  // namespace
}  // namespace hallwright
