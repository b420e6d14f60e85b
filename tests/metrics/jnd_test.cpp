// JND table (ISO 3382-1:2009 Table A.1, REFERENCES Part B §1.7; STI after Galbrun & Kitapci).
#include <gtest/gtest.h>

#include "hallwright/metrics.h"

namespace hw = hallwright;

TEST(Jnd, TableValuesAndRelativeScaling) {
    // REFERENCES Part B §1.7 (ISO 3382-1 Table A.1, from memory): G 1 dB, EDT 5 %, C80 1 dB,
    // D50 0.05, Ts 10 ms, J_LF 0.05; STI 0.03 (Galbrun & Kitapci 2014, found).
    EXPECT_DOUBLE_EQ(*hw::JndAt("G", 5.0), 1.0);
    EXPECT_DOUBLE_EQ(*hw::JndAt("EDT", 2.0), 0.1);
    EXPECT_DOUBLE_EQ(*hw::JndAt("EDT_M", 1.0), 0.05);
    EXPECT_DOUBLE_EQ(*hw::JndAt("C80_M", -3.0), 1.0);
    EXPECT_DOUBLE_EQ(*hw::JndAt("D50", 0.4), 0.05);
    EXPECT_DOUBLE_EQ(*hw::JndAt("Ts", 80.0), 10.0);
    EXPECT_DOUBLE_EQ(*hw::JndAt("LF_M", 0.2), 0.05);
    EXPECT_DOUBLE_EQ(*hw::JndAt("STI", 0.6), 0.03);
    EXPECT_FALSE(hw::JndAt("PNR", 40.0));
    // Where no source gives a JND, the table says so.
    EXPECT_NE(std::string(hw::FindJnd("C50")->source).find("common practice, no source"), std::string::npos);
    // Every single number averages over reported octaves that exist.
    for (const auto& s : hw::kSingleNumbers)
        for (int hz : s.bandsHz)
            if (hz) EXPECT_TRUE(hw::BandIndexOfNominal(hz)) << s.name;
}
