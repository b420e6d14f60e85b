// [review] keys: defaults, the theatre demo's venue, and a clear error for a bad venue.
#include <algorithm>

#include "review/review_fixture.h"

namespace hallwright::test {
namespace {

TEST(ReviewOptions, DefaultsAreConcertAndThreeDegrees) {
    Scene scene;
    const ReviewOptions o = ReviewOptionsFrom(scene);
    EXPECT_EQ(o.venue, Venue::kConcert);  // issue 10: default "concert", the stricter
    EXPECT_EQ(o.flutterMaxAngleDeg, 3.0);  // issue 10: common practice, no source
}

TEST(ReviewOptions, BadVenueNamesFileAndLine) {
    const std::string dir = TempDir("review_options");
    for (const char* f : {"room.obj", "materials.csv"}) {
        std::ifstream in(SourcePath(std::string("tests/data/review/flutter_parallel/") + f));
        WriteFile(dir, f, std::string((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>()));
    }
    std::ifstream in(SourcePath("tests/data/review/flutter_parallel/scene.toml"));
    std::string toml((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
    const int line = static_cast<int>(std::count(toml.begin(), toml.end(), '\n')) + 2;
    toml += "[review]\nvenue = \"opera\"\n";
    const std::string path = WriteFile(dir, "scene.toml", toml);
    Diagnostics diag;
    EXPECT_FALSE(LoadScene(path, diag));
    ASSERT_EQ(diag.ErrorCount(), 1);
    const Diagnostic& d = diag.Items()[0];
    EXPECT_EQ(d.at.file, path);
    EXPECT_EQ(d.at.line, line);
    EXPECT_NE(d.message.find("must be \"concert\" or \"theatre\""), std::string::npos) << d.message;
}

}  // namespace
}  // namespace hallwright::test
