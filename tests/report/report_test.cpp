// The report page: self-contained, one mark per seat with its value, colours ordered by value,
// sentences only for differences above one JND, escaping, and the seat curves.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <regex>

#include "hallwright/metrics.h"
#include "hallwright/report.h"
#include "test_support.h"

namespace hallwright {
namespace {

/* Five seats in two zones with hand-chosen single-number C80 and G values. */
ReportInput HandInput() {
    ReportInput in;
    in.title = "Test hall <&> \"quoted\"";
    in.sources = {"stage"};
    in.zones = {"stalls", "balcony"};
    in.reportedBandsHz = {500, 1000};
    in.geometry.planMin = {0, 0};
    in.geometry.planMax = {20, 10};
    in.geometry.floors.push_back({PlanPoint{0, 0}, PlanPoint{20, 0}, PlanPoint{20, 10}});
    in.geometry.walls.push_back({PlanPoint{0, 0}, PlanPoint{20, 0}});
    in.geometry.sources.push_back({"stage", PlanPoint{1, 5}});
    const double c80[] = {-1.5, 0.25, 2.0, 3.5, -0.75};
    const double g[] = {4.0, 3.0, 2.5, 1.0, 5.0};
    for (int i = 0; i < 5; ++i) {
        ReportSeat s;
        s.name = "seat-" + std::to_string(i);
        s.zone = i < 3 ? "stalls" : "balcony";
        s.u = 4 + 3 * i;
        s.v = 2 + i;
        s.values.resize(1);
        s.directOccluded = {0};
        s.values[0].push_back({"C80", 0, c80[i], 0.2});
        s.values[0].push_back({"G", 0, g[i], 0.3});
        s.values[0].push_back({"C80", 500, c80[i] - 1, 0.3});
        in.seats.push_back(s);
    }
    return in;
}

struct Mark {
    std::string seat, value, fill;
};

/* The plan's seat marks as written in the page. */
std::vector<Mark> Marks(const std::string& html) {
    std::vector<Mark> out;
    static const std::regex re("<circle class=\"seat\"[^>]*data-seat=\"([^\"]*)\"[^>]*data-value=\"([^\"]*)\"[^>]*"
                               "fill=\"(#[0-9a-f]{6})\"");
    for (auto it = std::sregex_iterator(html.begin(), html.end(), re); it != std::sregex_iterator(); ++it)
        out.push_back({(*it)[1], (*it)[2], (*it)[3]});
    return out;
}

TEST(ReportHtml, IsSelfContained) {
    const std::string html = RenderReport(HandInput());
    EXPECT_EQ(html.find("http://"), std::string::npos);
    EXPECT_EQ(html.find("https://"), std::string::npos);
    EXPECT_EQ(html.find("<link"), std::string::npos);
    EXPECT_EQ(html.find("@import"), std::string::npos);
    EXPECT_EQ(html.find("url("), std::string::npos);
    EXPECT_EQ(html.find(" src="), std::string::npos);
    EXPECT_EQ(html.rfind("<!doctype html>", 0), 0u);
    EXPECT_NE(html.find("</html>"), std::string::npos);
}

TEST(ReportHtml, OneMarkPerSeatWithItsValue) {
    const ReportInput in = HandInput();
    const auto marks = Marks(RenderReport(in));
    ASSERT_EQ(marks.size(), in.seats.size());
    for (size_t i = 0; i < marks.size(); ++i) {
        EXPECT_EQ(marks[i].seat, in.seats[i].name);
        EXPECT_DOUBLE_EQ(std::stod(marks[i].value), *in.seats[i].values[0][0].value);  // C80 single number
    }
}

TEST(ReportColour, RampLightnessRisesMonotonically) {
    const auto& ramp = SequentialRamp();
    for (int i = 1; i < 256; ++i) EXPECT_GT(OklabLightness(ramp[i]), OklabLightness(ramp[i - 1])) << i;
    // Dark blue at the bottom, a light warm colour at the top.
    unsigned r0, g0, b0, r1, g1, b1;
    std::sscanf(ramp[0].c_str(), "#%02x%02x%02x", &r0, &g0, &b0);
    std::sscanf(ramp[255].c_str(), "#%02x%02x%02x", &r1, &g1, &b1);
    EXPECT_GT(b0, r0);
    EXPECT_GT(r1, b1);
    EXPECT_NEAR(OklabLightness(ramp[0]), 0.27, 0.01);
    EXPECT_NEAR(OklabLightness(ramp[255]), 0.87, 0.01);
    // White is L = 1 and black L = 0 in OKLab (Ottosson 2020).
    EXPECT_NEAR(OklabLightness("#ffffff"), 1.0, 1e-3);
    EXPECT_NEAR(OklabLightness("#000000"), 0.0, 1e-9);
    EXPECT_EQ(RampIndex(-1, 0, 1), 0);
    EXPECT_EQ(RampIndex(2, 0, 1), 255);
    EXPECT_EQ(RampIndex(0.5, 0, 1), 128);
}

TEST(ReportHtml, MarkColoursFollowTheirValues) {
    const auto marks = Marks(RenderReport(HandInput()));
    std::vector<std::pair<double, double>> vl;  // (value, lightness)
    for (const auto& m : marks) vl.push_back({std::stod(m.value), OklabLightness(m.fill)});
    std::sort(vl.begin(), vl.end());
    for (size_t i = 1; i < vl.size(); ++i) EXPECT_GT(vl[i].second, vl[i - 1].second);
    // The extremes take the ends of the ramp.
    EXPECT_EQ(marks[3].fill, SequentialRamp()[255]);  // C80 = 3.5, the largest
    EXPECT_EQ(marks[0].fill, SequentialRamp()[0]);    // C80 = -1.5, the smallest
}

TEST(ReportSentences, OnlyForDifferencesAboveOneJnd) {
    ReportInput in = HandInput();
    // JNDs (ISO 3382-1 Table A.1): C80 1 dB, G 1 dB, EDT 5 % relative.
    in.zoneDifferences = {
        {0, "balcony", "stalls", "C80", 0, 1.5, 1.5, 0.3, 2.0, 0.5},     // sentence: clearer
        {0, "balcony", "stalls", "G", 0, -0.6, -0.6, 0.2, 2.0, 2.6},      // below one JND: none
        {0, "balcony", "stalls", "EDT", 0, -0.24, -2.4, 0.4, 1.8, 2.04},  // sentence: drier
        {0, "balcony", "stalls", "C80", 500, 3.0, 3.0, 0.4, 1.0, -2.0},   // band value: table only
        {0, "balcony", "stalls", "LF", 0, 0.04, 0.8, 0.1, 0.2, 0.16},     // below: none
    };
    const std::string html = RenderReport(in);
    const size_t a = html.find("<div id=\"sentences\">");
    ASSERT_NE(a, std::string::npos);
    const std::string list = html.substr(a, html.find("</div>", a) - a);
    size_t n = 0;
    for (size_t p = list.find("<li>"); p != std::string::npos; p = list.find("<li>", p + 1)) ++n;
    EXPECT_EQ(n, 2u);
    EXPECT_NE(list.find("In balcony, C80 is 1.5 dB higher than in stalls (1.5 JND"), std::string::npos) << list;
    EXPECT_NE(list.find("clearer and less reverberant"), std::string::npos);
    EXPECT_NE(list.find("EDT is 0.24 s shorter than in stalls (2.4 JND"), std::string::npos) << list;
    EXPECT_NE(list.find("drier"), std::string::npos);
    EXPECT_EQ(list.find("G is"), std::string::npos);
    EXPECT_EQ(DifferenceSentence(in.zoneDifferences[1]), "");
    EXPECT_EQ(DifferenceSentence(in.zoneDifferences[4]), "");
    // An interval that reaches below one JND is said so.
    ReportZoneDifference close{0, "a", "b", "STI", 0, 0.036, 1.2, 0.5, 0.6, 0.564};
    EXPECT_NE(DifferenceSentence(close).find("speech intelligibility there is better"), std::string::npos);
    EXPECT_NE(DifferenceSentence(close).find("interval reaches below one JND"), std::string::npos);
    ReportZoneDifference louder{0, "a", "b", "G", 0, 2.0, 2.0, 0.2, 5, 3};
    EXPECT_NE(DifferenceSentence(louder).find("louder"), std::string::npos);
    ReportZoneDifference wider{0, "a", "b", "LF", 0, -0.1, -2.0, 0.2, 0.1, 0.2};
    EXPECT_NE(DifferenceSentence(wider).find("narrower"), std::string::npos);
}

TEST(ReportHtml, EscapesTextFromTheInput) {
    ReportInput in = HandInput();
    in.title = "<script>alert('x')</script>";
    in.seats[0].name = "a\"b<c>";
    in.warnings = {"scene.toml:3: warning: <b>bold</b> & more"};
    in.findingsJson = R"({"findings":[{"rule":"flutter","severity":"fault","summary":"</script><img>","surfaces":["w<1>"],
        "seats":[],"values":{"separation_m":12.5},"remedies":["splay <one> wall"]}]})";
    const std::string html = RenderReport(in);
    EXPECT_EQ(html.find("<script>alert"), std::string::npos);
    EXPECT_NE(html.find("&lt;script&gt;alert(&#39;x&#39;)&lt;/script&gt;"), std::string::npos);
    EXPECT_NE(html.find("data-seat=\"a&quot;b&lt;c&gt;\""), std::string::npos);
    EXPECT_NE(html.find("&lt;b&gt;bold&lt;/b&gt; &amp; more"), std::string::npos);
    EXPECT_EQ(html.find("<img>"), std::string::npos);
    EXPECT_NE(html.find("splay &lt;one&gt; wall"), std::string::npos);
    EXPECT_NE(html.find("separation_m = 12.500"), std::string::npos);
    // The embedded data has no "<" that could close its script element.
    const size_t d = html.find("id=\"hw-data\">");
    const std::string data = html.substr(d + 13, html.find("</script>", d) - d - 13);
    EXPECT_EQ(data.find('<'), std::string::npos);
    EXPECT_EQ(HtmlEscape("&<>\"'"), "&amp;&lt;&gt;&quot;&#39;");
}

TEST(ReportHtml, ShowsCautionsFindingsAndTheSchroederFrequency) {
    ReportInput in = HandInput();
    RoomEstimates room;
    room.volumeM3 = 10000;
    room.eyringS = Bands::Constant(1.6);
    room.sabineS = Bands::Constant(1.7);
    in.room = room;
    in.findingsJson = "[]";
    const std::string html = RenderReport(in);
    for (const char* s : {"Estimates only", "Monte Carlo noise only", "Not validated against measured halls",
                          "licensed acoustician", "Playback can be loud", "The review found nothing"})
        EXPECT_NE(html.find(s), std::string::npos) << s;
    // Schroeder frequency 2000 sqrt(T/V) (Schroeder; Kuttruff, Room Acoustics, from memory):
    // 2000 sqrt(1.6 / 10000) = 25.3 Hz.
    EXPECT_NE(html.find("= <b>25 Hz</b>"), std::string::npos);
    in.findingsJson = "not json";
    EXPECT_NE(RenderReport(in).find("could not be read"), std::string::npos);
}

/* A histogram with energy E0 exp(-t / tau) in every bin of every batch (one band). */
ReceiverHistogram ExponentialHistogram(int bins, double tau, int band) {
    ReceiverHistogram h;
    h.binCount = bins;
    h.energy.assign(static_cast<size_t>(kBatchCount) * bins * kBandCount, 0.0f);
    for (int b = 0; b < kBatchCount; ++b)
        for (int k = 0; k < bins; ++k)
            h.energy[(static_cast<size_t>(b) * bins + k) * kBandCount + band] =
                static_cast<float>(1e-3 * std::exp(-(k * kBinWidthS) / tau));
    return h;
}

TEST(SeatCurves, SchroederIntegralOfAnExponentialDecaysAtItsRate) {
    // Schroeder (1965): the backward integral of E0 e^(-t/tau) is tau E0 e^(-t/tau), a line of
    // slope -10 log10(e) / tau dB/s; with T = 0.8 s (tau = T / (6 ln 10)) it falls 60 dB in T,
    // apart from the cut-off at the record's end (2.4 s = 3 T, 180 dB down: negligible before 1.6 s).
    const double T = 0.8, tau = T / (6 * std::log(10.0));
    const auto hist = ExponentialHistogram(2400, tau, 4);
    ReceiverPaths paths;
    const SeatCurves c = CurvesFromHistogram(paths, hist, {4});
    ASSERT_EQ(c.bands.size(), 1u);
    EXPECT_EQ(c.bands[0].hz, 1000);
    EXPECT_DOUBLE_EQ(c.bands[0].schroederDb[0], 0.0);
    // From 0.1 s to 0.5 s: 0.4 s of a 60 dB/0.8 s decay = 30 dB (float bins: 1e-4 dB level).
    EXPECT_NEAR(c.bands[0].schroederDb[100] - c.bands[0].schroederDb[500], 30.0, 1e-3);
    EXPECT_NEAR(c.bands[0].etcDb[800], -60.0, 1e-3);
}

TEST(SeatCurves, SpecularPathsAreAddedToTheirBin) {
    ReceiverHistogram hist;
    hist.binCount = 100;
    hist.energy.assign(static_cast<size_t>(kBatchCount) * 100 * kBandCount, 0.0f);
    ReceiverPaths paths;
    SpecularPath direct;
    direct.delayS = 0.0105;  // bin 10
    direct.energy = Bands::Constant(1e-2);
    SpecularPath wall = direct;
    wall.delayS = 0.0302;  // bin 30, 10 dB weaker
    wall.energy = Bands::Constant(1e-3);
    paths.paths = {direct, wall};
    const SeatCurves c = CurvesFromHistogram(paths, hist, {3, 5});
    ASSERT_EQ(c.bands.size(), 2u);
    EXPECT_DOUBLE_EQ(c.bands[0].etcDb[10], 0.0);
    EXPECT_NEAR(c.bands[0].etcDb[30], -10.0, 1e-9);
    EXPECT_LE(c.bands[0].etcDb[20], -150.0);
    // Backward integral: the whole 1.1e-2 up to bin 10, only the 1e-3 after it.
    EXPECT_NEAR(c.bands[1].schroederDb[10], 0.0, 1e-12);
    EXPECT_NEAR(c.bands[1].schroederDb[11], 10 * std::log10(1e-3 / 1.1e-2), 1e-9);
}

/* A box scene with hand-made seat tables: zone statistics and JND differences by hand. */
TEST(ReportInputs, ZoneStatisticsAndDifferencesMatchAHandComputation) {
    Scene scene = test::MakeBoxScene(20, 8, 12, test::UniformMaterial("hard", 0.1, 0.1));
    scene.sources.push_back({"stage", Vec3(2, 1.5, 6), {}});
    const double c80[] = {1.0, 2.0, 3.0, 5.0};
    for (int i = 0; i < 4; ++i) {
        Receiver r;
        r.name = "r" + std::to_string(i);
        r.zone = i < 2 ? "front" : "rear";
        r.position = Vec3(6 + 3 * i, 1.2, 6);
        scene.receivers.push_back(r);
    }
    Diagnostics diag;
    auto geometry = Geometry::Build(scene, diag);
    ASSERT_TRUE(geometry) << diag.ToString();
    std::vector<SeatResult> seats;
    for (int i = 0; i < 4; ++i) {
        SeatResult s;
        s.receiver = i;
        ParameterValue v;
        v.parameter = "C80_M";
        v.unit = "dB";
        v.value = c80[i];
        v.ci95 = 0.1;
        // Replicates: the value shifted by +-0.05 dB alternately (the same for every seat).
        for (int b = 0; b < kBatchCount; ++b) v.leaveOneOut.push_back(c80[i] + (b % 2 ? 0.05 : -0.05));
        s.table.values.push_back(v);
        seats.push_back(s);
    }
    const ReportInput in = MakeReportInput(scene, *geometry, seats, EstimateRoom(scene, *geometry));
    ASSERT_EQ(in.seats.size(), 4u);
    EXPECT_EQ(in.zones, (std::vector<std::string>{"front", "rear"}));
    const ReportZoneStat* front = nullptr;
    for (const auto& z : in.zoneStats)
        if (z.zone == "front" && z.parameter == "C80" && z.band == 0) front = &z;
    ASSERT_NE(front, nullptr);
    EXPECT_EQ(front->nSeats, 2);
    EXPECT_DOUBLE_EQ(front->mean, 1.5);
    EXPECT_DOUBLE_EQ(front->min, 1.0);
    EXPECT_DOUBLE_EQ(front->max, 2.0);
    // Jackknife (zones.h): zone replicate means are 1.5 +- 0.05; SE = sqrt(7/8 * 8 * 0.05^2) = 0.1323,
    // CI95 = t(0.975, 7) SE = 2.365 * 0.1323 = 0.3129.
    EXPECT_NEAR(front->ci95, 2.3646 * std::sqrt(7.0 / 8.0 * 8 * 0.0025), 1e-3);
    ASSERT_EQ(in.zoneDifferences.size(), 1u);
    const auto& d = in.zoneDifferences[0];
    EXPECT_EQ(d.zoneA, "front");
    EXPECT_EQ(d.zoneB, "rear");
    // 1.5 - 4.0 = -2.5 dB, JND 1 dB (ISO 3382-1 Table A.1): -2.5 JND; the replicates shift
    // both zones alike, so the difference has no batch spread.
    EXPECT_DOUBLE_EQ(d.difference, -2.5);
    EXPECT_DOUBLE_EQ(d.differenceJnd, -2.5);
    EXPECT_NEAR(d.ci95Jnd, 0.0, 1e-12);
    // The box has no overhang: no section; the floor (y = 0, 2 triangles) faces up, 8 wall triangles.
    EXPECT_FALSE(in.geometry.hasSection);
    EXPECT_EQ(in.geometry.floors.size(), 2u);
    EXPECT_EQ(in.geometry.walls.size(), 8u);
    // Main axis: source toward the seats' centroid = +x, so u = x and v = (x cross y) . p = z.
    EXPECT_NEAR(in.seats[0].u, 6.0, 1e-12);
    EXPECT_NEAR(in.seats[0].v, 6.0, 1e-12);
}

}  // namespace
}  // namespace hallwright
