// review.json: the schema of issue 10 for every rule, NaN written as null, and the combined
// review of the demo theatre.
#include <limits>
#include <map>
#include <set>

#include <nlohmann/json.hpp>

#include "review/review_fixture.h"

namespace hallwright::test {
namespace {

TEST(ReviewJson, SchemaOfIssue10ForEveryRule) {
    auto theatre = LoadMoved("scenes/theatre/scene.toml");
    auto cylinder = LoadMoved("tests/data/review/focus_cylinder/scene.toml");
    ASSERT_TRUE(theatre && cylinder);
    std::vector<Finding> all = ReviewRoom(theatre->scene, *theatre->geometry, ReviewOptionsFrom(theatre->scene));
    for (Finding& f : ReviewFocusing(cylinder->scene, *cylinder->geometry, ReviewOptions{})) all.push_back(f);
    ReceiverPaths rp;
    rp.paths.resize(2);
    rp.paths[0].delayS = 0.01;
    rp.paths[0].energy = Bands::Constant(1);
    rp.paths[1].delayS = 0.2;
    rp.paths[1].energy = Bands::Constant(0.25);
    for (Finding& f : ReviewEchoes(theatre->scene, *theatre->geometry, {rp}, ReviewOptions{})) all.push_back(f);

    const auto j = nlohmann::json::parse(FindingsToJson(all));
    ASSERT_TRUE(j.contains("findings"));
    ASSERT_EQ(j["findings"].size(), all.size());
    const std::map<std::string, std::vector<std::string>> required = {
        {"flutter", {"separation_m", "period_s", "angle_deg"}},
        {"echo", {"delay_s", "criterion", "limit"}},
        {"focusing", {"radius_m", "centre", "focus"}},
        {"overhang", {"depth_m", "height_m", "ratio", "limit", "venue"}},
        {"facing", {"material", "surface_density_kg_m2", "f0_hz"}}};
    std::set<std::string> seen;
    for (const auto& f : j["findings"]) {
        for (const char* key : {"rule", "severity", "summary", "surfaces", "seats", "values", "remedies"})
            ASSERT_TRUE(f.contains(key)) << key;
        const std::string rule = f["rule"];
        ASSERT_TRUE(required.count(rule)) << rule;
        seen.insert(rule);
        const std::string sev = f["severity"];
        EXPECT_TRUE(sev == "info" || sev == "warning" || sev == "fault");
        for (const std::string& key : required.at(rule)) EXPECT_TRUE(f["values"].contains(key)) << rule << " " << key;
        if (rule == "focusing") {
            EXPECT_EQ(f["values"]["centre"].size(), 3u);
            EXPECT_EQ(f["values"]["focus"].size(), 3u);
        }
    }
    EXPECT_EQ(seen.size(), required.size());
}

TEST(ReviewJson, NotANumberBecomesNull) {
    Finding f;
    f.rule = "facing";
    f.severity = "info";
    f.values = {{"f0_hz", std::numeric_limits<double>::quiet_NaN()}, {"x", 1.5}};
    const auto j = nlohmann::json::parse(FindingsToJson({f}));
    EXPECT_TRUE(j["findings"][0]["values"]["f0_hz"].is_null());
    EXPECT_EQ(j["findings"][0]["values"]["x"], 1.5);
}

TEST(ReviewJson, TheatreReviewFindings) {
    auto room = LoadMoved("scenes/theatre/scene.toml");
    ASSERT_TRUE(room);
    const auto all = ReviewRoom(room->scene, *room->geometry, ReviewOptionsFrom(room->scene));
    // Stage-house flutter (warning), splayed side walls (info), overhang within the theatre
    // guideline (info), the panel-faced absorber (fault), the slatted absorber (info).
    EXPECT_EQ(OfRule(all, "overhang").size(), 1u);
    EXPECT_EQ(OfSeverity(OfRule(all, "overhang"), "info").size(), 1u);
    EXPECT_EQ(OfSeverity(OfRule(all, "flutter"), "warning").size(), 1u);
    EXPECT_EQ(OfSeverity(OfRule(all, "facing"), "fault").size(), 1u);
    EXPECT_TRUE(OfRule(all, "focusing").empty());
}

}  // namespace
}  // namespace hallwright::test
