// Long-form parameter CSV: schema, formatting and atomic write.
#include "hallwright/parameters_csv.h"

#include <filesystem>
#include <fstream>
#include <sstream>

#include <gtest/gtest.h>

#include "test_support.h"

namespace hw = hallwright;

TEST(ParametersCsv, SchemaAndFormatting) {
    hw::ParameterTable t;
    t.notes.push_back("direct sound occluded");
    hw::ParameterValue a{"T30", 1000, "s", 1.23456789, 0.0123, "", {}, {}};
    hw::ParameterValue b{"T30", 125, "s", std::nullopt, std::nullopt, "needs 45 dB, raise duration_s to 2.5", {}, {}};
    hw::ParameterValue c{"STI", 0, "ratio", 0.61, 0.004, "", {}, {}};
    t.values = {a, b, c};
    const auto rows = hw::ToRows(t, "S1", "A 1", "stalls");
    ASSERT_EQ(rows.size(), 3u);
    EXPECT_EQ(std::string(hw::ParameterCsvHeader()), "source,receiver,zone,band,parameter,value,ci95,unit,note");
    EXPECT_EQ(hw::FormatParameterRow(rows[0]), "S1,A 1,stalls,1000,T30,1.23457,0.0123,s,direct sound occluded");
    EXPECT_EQ(hw::FormatParameterRow(rows[1]), "S1,A 1,stalls,125,T30,,,s,\"needs 45 dB, raise duration_s to 2.5\"");
    EXPECT_EQ(hw::FormatParameterRow(rows[2]), "S1,A 1,stalls,avg,STI,0.61,0.004,ratio,");
}

TEST(ParametersCsv, WritesWholeFileAndNoTemporary) {
    const std::string dir = hw::test::TempDir("params_csv");
    hw::ParameterRow r;
    r.source = "S";
    r.receiver = "R";
    r.band = 500;
    r.parameter = "C80";
    r.value = -1.5;
    r.unit = "dB";
    hw::Diagnostics diag;
    ASSERT_TRUE(hw::WriteParametersCsv(dir + "/p.csv", {r, r}, diag)) << diag.ToString();
    std::ifstream in(dir + "/p.csv");
    std::stringstream ss;
    ss << in.rdbuf();
    EXPECT_EQ(ss.str(), std::string(hw::ParameterCsvHeader()) + "\nS,R,,500,C80,-1.5,,dB,\nS,R,,500,C80,-1.5,,dB,\n");
    int files = 0;
    for (auto& e : std::filesystem::directory_iterator(dir)) files += e.is_regular_file();
    EXPECT_EQ(files, 1);
    EXPECT_FALSE(hw::WriteParametersCsv("/nonexistent/x/p.csv", {r}, diag));
    EXPECT_NE(diag.ToString().find("/nonexistent/x/p.csv"), std::string::npos);
}
