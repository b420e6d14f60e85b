#include "hallwright/histogram_csv.h"

#include <gtest/gtest.h>

#include <filesystem>
#include <fstream>
#include <sstream>

#include "test_support.h"

namespace hallwright {
namespace {

ReceiverHistogram SmallHistogram() {
    ReceiverHistogram h;
    h.source = 0;
    h.receiver = 1;
    h.binCount = 5;
    h.energy.assign(static_cast<size_t>(kBatchCount) * h.binCount * kBandCount, 0.0f);
    // Batch k puts k + 1 into bin 2, band 3: the mean over batches is 4.5.
    for (int k = 0; k < kBatchCount; ++k) h.energy[(static_cast<size_t>(k) * h.binCount + 2) * kBandCount + 3] = k + 1.0f;
    return h;
}

Scene TwoSeatScene() {
    Scene s;
    Source src;
    src.name = "stage left";
    s.sources.push_back(src);
    Receiver r;
    r.name = "A1";
    s.receivers.push_back(r);
    r.name = "row/B 2";
    s.receivers.push_back(r);
    return s;
}

// Column layout of issue 4, tracer = mean over batches, sum = tracer + specular paths in the
// bin of their delay (floor(delay / 1 ms)); paths beyond the last bin are left out.
TEST(HistogramCsv, TracerColumnsAreBatchMeansAndSumAddsSpecularPaths) {
    ReceiverHistogram h = SmallHistogram();
    ReceiverPaths paths;
    paths.source = 0;
    paths.receiver = 1;
    SpecularPath direct;
    direct.delayS = 0.0025;  // bin 2
    direct.energy = Bands::Constant(0.25);
    SpecularPath late;
    late.delayS = 0.0101;  // past the 5 bins
    late.energy = Bands::Constant(9);
    paths.paths = {direct, late};
    const std::string csv = FormatHistogramCsv(h, &paths);
    std::istringstream in(csv);
    std::string line;
    std::getline(in, line);
    EXPECT_EQ(line,
              "time_s,tracer_63,tracer_125,tracer_250,tracer_500,tracer_1000,tracer_2000,tracer_4000,tracer_8000,"
              "sum_63,sum_125,sum_250,sum_500,sum_1000,sum_2000,sum_4000,sum_8000");
    std::vector<std::string> rows;
    while (std::getline(in, line)) rows.push_back(line);
    ASSERT_EQ(rows.size(), 5u);
    EXPECT_EQ(rows[0], "0.000,0,0,0,0,0,0,0,0,0,0,0,0,0,0,0,0");
    EXPECT_EQ(rows[2], "0.002,0,0,0,4.5,0,0,0,0,0.25,0.25,0.25,4.75,0.25,0.25,0.25,0.25");
    EXPECT_EQ(rows[4], "0.004,0,0,0,0,0,0,0,0,0,0,0,0,0,0,0,0");
}

TEST(HistogramCsv, WritesOneFilePerPairWithSafeNamesAndNoTemporaryLeft) {
    const std::string dir = test::TempDir("histogram_csv");
    Scene s = TwoSeatScene();
    std::vector<ReceiverHistogram> hs = {SmallHistogram()};
    Diagnostics diag;
    ASSERT_TRUE(WriteHistogramCsv(dir, s, hs, nullptr, diag)) << diag.ToString();
    const std::filesystem::path file = std::filesystem::path(dir) / "histograms" / "stage_left__row_B_2.csv";
    ASSERT_TRUE(std::filesystem::exists(file));
    int count = 0;
    for (const auto& e : std::filesystem::directory_iterator(file.parent_path())) {
        EXPECT_EQ(e.path().extension(), ".csv");
        ++count;
    }
    EXPECT_EQ(count, 1);
}

TEST(HistogramCsv, UnwritableFolderIsAnErrorNamingIt) {
    const std::string dir = test::TempDir("histogram_csv_bad");
    const std::string blocker = test::WriteFile(dir, "histograms", "a file where the folder should be");
    Scene s = TwoSeatScene();
    Diagnostics diag;
    EXPECT_FALSE(WriteHistogramCsv(dir, s, {SmallHistogram()}, nullptr, diag));
    ASSERT_TRUE(diag.HasErrors());
    EXPECT_NE(diag.ToString().find("histograms"), std::string::npos) << diag.ToString();
}

}  // namespace
}  // namespace hallwright
