// Echo rule: the Dietsch & Kraak criterion on synthetic responses against its analytic
// two-impulse value, and on image-source paths of a long hall with a hard or absorbing rear
// wall.
#include <algorithm>

#include "hallwright/image_sources.h"
#include "review/review_fixture.h"

namespace hallwright::test {
namespace {

/* Direct sound (pressure 1) at 10 ms plus one reflection of pressure `a`, `delayS` later. */
std::vector<ReceiverPaths> TwoImpulses(double a, double delayS) {
    ReceiverPaths rp;
    SpecularPath direct, late;
    direct.delayS = 0.010;
    direct.lengthM = 0.010 * 343.2;
    direct.energy = Bands::Constant(1.0);
    late.order = 1;
    late.delayS = 0.010 + delayS;
    late.lengthM = late.delayS * 343.2;
    late.energy = Bands::Constant(a * a);
    late.faces = {0};
    rp.paths = {direct, late};
    return {rp};
}

Scene OneSeatScene() {
    Scene s;
    s.receivers.push_back(Receiver{"seat", Vec3::Zero(), "", Vec3(1, 0, 0), "", false, {}});
    s.sources.push_back(Source{"S", Vec3(1, 0, 0), {}});
    return s;
}

// Analytic check (REFERENCES Part A section 6, computed): a direct impulse plus one impulse of
// amplitude a at tau_r gives EK_max = a^n tau_r / ((1 + a^n) dtE).
double TwoImpulseEk(double a, double tauR, double n, double window) {
    return std::pow(a, n) * tauR / ((1.0 + std::pow(a, n)) * window);
}

TEST(EchoReview, DietschKraakMatchesTheTwoImpulseFormula) {
    auto room = LoadMoved("tests/data/review/flutter_parallel/scene.toml");  // any geometry, for face names
    ASSERT_TRUE(room);
    Scene scene = OneSeatScene();
    scene.mesh = room->scene.mesh;
    ReviewOptions music, speech;
    speech.venue = Venue::kTheatre;
    // Music (n = 1, 14 ms, limit 1.8): equal level 60 ms later -> EK = 60/28 = 2.14, an echo.
    auto f = ReviewEchoes(scene, *room->geometry, TwoImpulses(1.0, 0.060), music);
    ASSERT_EQ(f.size(), 1u);
    EXPECT_NEAR(f[0].Number("ek"), TwoImpulseEk(1.0, 0.060, 1.0, 0.014), 1e-9);
    EXPECT_EQ(f[0].severity, "warning");  // specular response only: a possible echo
    EXPECT_EQ(f[0].summary.rfind("likely echo", 0), 0u) << f[0].summary;
    EXPECT_NEAR(f[0].Number("delay_s"), 0.060, 1e-12);
    EXPECT_EQ(f[0].Number("limit"), 1.8);
    EXPECT_EQ(f[0].seats, (std::vector<std::string>{"seat"}));
    // 50 ms equal level: EK = 1.786 just below 1.8 but above EK10% = 1.5 -> warning.
    f = ReviewEchoes(scene, *room->geometry, TwoImpulses(1.0, 0.050), music);
    ASSERT_EQ(f.size(), 1u);
    EXPECT_NEAR(f[0].Number("ek"), 50.0 / 28.0, 1e-9);
    EXPECT_EQ(f[0].severity, "warning");
    EXPECT_EQ(f[0].summary.rfind("possible echo", 0), 0u) << f[0].summary;
    // Speech (n = 2/3, 9 ms, limit 1.0): a = 0.5 at 100 ms -> EK = 4.29.
    f = ReviewEchoes(scene, *room->geometry, TwoImpulses(0.5, 0.100), speech);
    ASSERT_EQ(f.size(), 1u);
    EXPECT_NEAR(f[0].Number("ek"), TwoImpulseEk(0.5, 0.100, 2.0 / 3.0, 0.009), 1e-9);
    EXPECT_EQ(f[0].severity, "warning");
    // A weak reflection (a = 0.02 at 100 ms, EK = 0.76) and an early one (40 ms) are no echo.
    for (auto [a, t] : {std::pair{0.02, 0.100}, std::pair{1.0, 0.040}}) {
        f = ReviewEchoes(scene, *room->geometry, TwoImpulses(a, t), speech);
        ASSERT_EQ(f.size(), 1u);
        EXPECT_EQ(f[0].severity, "info") << a << " " << t;
    }
}

TEST(EchoReview, UniformDiffusePartGivesTheAnalyticBaselineOfOneHalf) {
    // With only a uniform diffuse part from t = 0, t_s(tau) = tau / 2, so EK = 1/2 for every
    // window (analytic, from the definition of t_s in Dietsch & Kraak 1986). A vanishing direct
    // sound and a zero-energy arrival at 100 ms only mark t = 0 and the window to judge.
    auto room = LoadMoved("tests/data/review/flutter_parallel/scene.toml");
    ASSERT_TRUE(room);
    Scene scene = OneSeatScene();
    scene.mesh = room->scene.mesh;
    auto paths = TwoImpulses(0.0, 0.100);
    paths[0].paths[0].delayS = 0.0;
    paths[0].paths[0].energy = Bands::Constant(1e-30);
    paths[0].paths[1].delayS = 0.100;
    ReceiverHistogram h;
    h.binCount = 400;
    h.energy.assign(static_cast<size_t>(kBatchCount) * h.binCount * kBandCount, 1e-4f);
    const std::vector<ReceiverHistogram> diffuse = {h};
    for (Venue venue : {Venue::kTheatre, Venue::kConcert}) {
        ReviewOptions o;
        o.venue = venue;
        const auto f = ReviewEchoes(scene, *room->geometry, paths, o, &diffuse);
        ASSERT_EQ(f.size(), 1u);
        EXPECT_EQ(f[0].severity, "info");
        // The 1 ms bins sit at bin centres: t_s is off by at most half a bin over ~0.1 s.
        EXPECT_NEAR(f[0].Number("ek"), 0.5, 0.01);
    }
    // The same late arrival with energy: the diffuse part masks it (EK lower than alone).
    auto loud = TwoImpulses(1.0, 0.100);
    ReviewOptions speech;
    speech.venue = Venue::kTheatre;
    const double alone = ReviewEchoes(scene, *room->geometry, loud, speech)[0].Number("ek");
    const double masked = ReviewEchoes(scene, *room->geometry, loud, speech, &diffuse)[0].Number("ek");
    EXPECT_LT(masked, alone);
}

std::vector<Finding> EchoesOf(const char* scenePath) {
    auto room = LoadMoved(scenePath);
    EXPECT_TRUE(room);
    if (!room) return {};
    Diagnostics diag;
    ImageSourceOptions iso;
    iso.order = 2;
    iso.exhaustive = true;  // small room: every path, no search misses
    const auto paths = ComputeImageSources(room->scene, *room->geometry, 0, {}, iso, diag);
    EXPECT_FALSE(diag.HasErrors()) << diag.ToString();
    return ReviewEchoes(room->scene, *room->geometry, paths, ReviewOptionsFrom(room->scene));
}

TEST(EchoReview, HardRearWallEchoGoneWhenAbsorbing) {
    // Long hall (venue = "theatre": speech criterion): source at z = 3 m; the rear wall at
    // z = 40 m returns a reflection 40 m (116 ms) behind the direct sound at the seat at z = 20.
    const auto hard = EchoesOf("tests/data/review/echo_hard_rear/scene.toml");
    const auto echoes = OfSeverity(hard, "warning");
    ASSERT_EQ(echoes.size(), 1u);
    EXPECT_EQ(echoes[0].surfaces, (std::vector<std::string>{"rear_wall"}));
    EXPECT_EQ(echoes[0].Number("order"), 1.0);
    // Path difference 2 x (40 - 20) m for the seat at z = 20 (same height and x offset cancel
    // to within a few cm): delay = 40 m / c.
    EXPECT_EQ(std::get<std::string>(*echoes[0].Value("seat")), "middle");
    EXPECT_NEAR(echoes[0].Number("delay_s"), echoes[0].Number("path_difference_m") / 343.2, 1e-6);
    EXPECT_NEAR(echoes[0].Number("path_difference_m"), 40.0, 0.1);
    // The same hall with the rear wall treated (alpha 0.95, s 0.3): no echo.
    const auto soft = EchoesOf("tests/data/review/echo_absorbing_rear/scene.toml");
    ASSERT_EQ(soft.size(), 1u);
    EXPECT_EQ(soft[0].severity, "info");
    EXPECT_LT(soft[0].Number("ek"), 0.9);
}

}  // namespace
}  // namespace hallwright::test
