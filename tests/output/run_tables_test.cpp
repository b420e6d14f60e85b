#include "hallwright/run_tables.h"

#include <sstream>

#include <gtest/gtest.h>

namespace hallwright {
namespace {

/* A scene with one source and three seats: two in "stalls", one in "balcony". */
Scene ThreeSeatScene() {
    Scene s;
    s.sources.push_back({"stage", Vec3(0, 1.5, 0), {}});
    s.receivers.push_back({"a", Vec3(1, 1.2, 5), "stalls", Vec3(0, 0, -1), "stage", false, {}});
    s.receivers.push_back({"b", Vec3(2, 1.2, 6), "stalls", Vec3(0, 0, -1), "stage", false, {}});
    s.receivers.push_back({"c", Vec3(3, 5.2, 20), "balcony", Vec3(0, 0, -1), "stage", false, {}});
    s.settings.reportedBands = {4};  // 1 kHz only
    return s;
}

ParameterValue Value(const std::string& name, int band, double v, double spread) {
    ParameterValue p;
    p.parameter = name;
    p.band = band;
    p.unit = "dB";
    p.value = v;
    p.ci95 = 0.1;
    for (int j = 0; j < kBatchCount; ++j) p.leaveOneOut.push_back(v + spread * (j % 2 == 0 ? 1 : -1));
    return p;
}

std::vector<SeatResult> Results() {
    std::vector<SeatResult> seats(3);
    const double c80[3] = {1.0, 3.0, -2.0};
    for (int r = 0; r < 3; ++r) {
        seats[r].source = 0;
        seats[r].receiver = r;
        seats[r].table.values.push_back(Value("C80", 1000, c80[r], 0.1 * (r + 1)));
        seats[r].table.values.push_back(Value("C80_M", 0, c80[r], 0.1 * (r + 1)));
    }
    return seats;
}

std::string Line(const std::string& text, int n) {
    std::istringstream in(text);
    std::string line;
    for (int i = 0; i <= n; ++i) std::getline(in, line);
    return line;
}

TEST(RunTables, SeatsCsvHasTheDocumentedColumns) {
    const std::string csv = FormatSeatsCsv(ThreeSeatScene(), Results());
    EXPECT_EQ(Line(csv, 0),
              "source,receiver,zone,x,y,z,direct_occluded,EDT_M,EDT_M_ci95,T30_M,T30_M_ci95,C80_M,C80_M_ci95,"
              "D50_M,D50_M_ci95,Ts_M,Ts_M_ci95,G_M,G_M_ci95,LF_M,LF_M_ci95,STI,STI_ci95");
    EXPECT_EQ(Line(csv, 1), "stage,a,stalls,1,1.2,5,0,,,,,1,0.1,,,,,,,,,,");
}

// Hand computation: stalls C80 = {1, 3}: mean 2, sd sqrt(2), min 1, max 3. Replicate means per
// batch: seat a 1 +- 0.1, seat b 3 +- 0.2 alternate together, so the zone replicate means are
// 2 +- 0.15; jackknife SE = sqrt(7/8 x 8 x 0.15^2) = 0.3968627; CI95 = 2.365 x SE = 0.93858.
TEST(RunTables, ZoneStatisticsByHand) {
    const std::string csv = FormatZonesCsv(ThreeSeatScene(), Results());
    EXPECT_EQ(Line(csv, 0), "source,zone,parameter,band,n_seats,mean,sd,min,max,ci95");
    EXPECT_NE(csv.find("stage,stalls,C80,1000,2,2,1.41421,1,3,0.93858\n"), std::string::npos) << csv;
    EXPECT_NE(csv.find("stage,balcony,C80,1000,1,-2,0,-2,-2,"), std::string::npos) << csv;
    EXPECT_NE(csv.find("stage,stalls,C80_M,avg,2,2,"), std::string::npos) << csv;
    // Parameters absent from every seat still get a row, with no statistics.
    EXPECT_NE(csv.find("stage,stalls,EDT,1000,0,,,,,\n"), std::string::npos) << csv;
}

// Difference stalls - balcony = 2 - (-2) = 4 dB = 4 JND (C80 JND 1 dB, ISO 3382-1 Table A.1);
// the replicates of both zones move together (shared batches), so the replicate differences
// are 4 + (0.15 - 0.3) and 4 - (0.15 - 0.3): SE = sqrt(7/8 x 8 x 0.15^2) = 0.3968627, CI95 =
// 0.93858 JND — smaller than either zone's own interval would suggest if they were independent.
TEST(RunTables, ZoneDifferencesInJndsByHand) {
    const std::string csv = FormatZoneDifferencesCsv(ThreeSeatScene(), Results());
    EXPECT_EQ(Line(csv, 0), "source,zone_a,zone_b,parameter,band,difference,difference_jnd,ci95_jnd");
    EXPECT_NE(csv.find("stage,stalls,balcony,C80,1000,4,4,0.93858\n"), std::string::npos) << csv;
}

}  // namespace
}  // namespace hallwright
