#include "hallwright/scene.h"

#include <gtest/gtest.h>

#include "scene/scene_toml.h"
#include "scene_fixtures.h"
#include "test_support.h"

namespace hallwright {
namespace {

using test::BoxObj;
using test::HasError;

const std::string kMinimal =
    "[model]\nmesh = \"box.obj\"\n"
    "[[source]]\nname = \"S\"\nposition = [2, 1.5, 2]\n"
    "[[receiver]]\nname = \"R\"\nposition = [6, 1.2, 8]\n";

// A scene file that sets every key of the schema (SceneSchema).
const std::string kEveryKey =
        "title = \"Test hall\"\n"
        "[model]\nmesh = \"box.obj\"\nunits = \"m\"\nup = \"y\"\n"
        "[materials]\ntables = [\"mats.csv\"]\n[materials.assign]\nconcrete = \"mine\"\n"
        "[air]\ntemperature_c = 12.5\nhumidity_pct = 70\npressure_kpa = 95\n"
        "[[source]]\nname = \"A\"\nposition = [2, 1.5, 2]\n"
        "[[source]]\nname = \"B\"\nposition = [6, 1.5, 2]\n"
        "[[receiver]]\nname = \"R\"\nposition = [6, 1.2, 8]\nzone = \"stalls\"\nfacing = [0, 0, -1]\n"
        "[[receiver]]\nname = \"Q\"\nposition = [4, 1.2, 8]\nfacing = \"B\"\n"
        "[[seating]]\nzone = \"floor\"\nsurfaces = [\"floor\"]\nspacing_m = 0.9\near_height_m = 1.1\nfacing = \"B\"\n"
        "[simulation]\nrays = 5000\nimage_order = 2\nduration_s = 1.5\nsample_rate = 44100\nseed = 7\n"
        "bands = [4000, 63, 8000]\n"
        "[review]\nvenue = \"theatre\"\nflutter_max_angle_deg = 5\n"
        "[speech]\nlevel_db = 66\n"
        "[noise]\noctave_db = [50, 45, 40, 35, 30, 25, 20, 15]\n"
        "[output]\nspatial_seats = [\"R\", \"Q\"]\nspatial_per_zone = 3\nhrtf = \"ears.sofa\"\n"
        "reflection_phase = \"in_phase\"\n";

// Writes box.obj plus scene.toml into a fresh directory and returns the scene path.
std::string WriteScene(const std::string& name, const std::string& toml, const std::string& obj = BoxObj(8, 4, 10)) {
    const std::string dir = test::TempDir("scene_loader/" + name);
    test::WriteFile(dir, "box.obj", obj);
    return test::WriteFile(dir, "scene.toml", toml);
}

TEST(SceneLoader, MinimalSceneGetsEveryDocumentedDefault) {
    const std::string path = WriteScene("minimal", kMinimal);
    Diagnostics diag;
    auto scene = LoadScene(path, diag);
    ASSERT_TRUE(scene) << diag.ToString();
    EXPECT_EQ(diag.Items().size(), 0u) << diag.ToString();
    EXPECT_EQ(scene->title, "scene");
    EXPECT_EQ(scene->modelUnits, "m");
    EXPECT_EQ(scene->modelUp, "y");
    EXPECT_DOUBLE_EQ(scene->air.temperatureC, 20.0);
    EXPECT_DOUBLE_EQ(scene->air.humidityPct, 50.0);
    EXPECT_DOUBLE_EQ(scene->air.pressureKPa, 101.325);
    EXPECT_EQ(scene->settings.rays, 100000);
    EXPECT_EQ(scene->settings.imageOrder, 3);
    EXPECT_FALSE(scene->settings.durationS);
    EXPECT_EQ(scene->settings.sampleRate, 48000);
    EXPECT_EQ(scene->settings.seed, 1u);
    EXPECT_EQ(scene->settings.reportedBands, (std::vector<int>{1, 2, 3, 4, 5, 6}));
    EXPECT_TRUE(scene->output.spatialSeats.empty());
    EXPECT_EQ(scene->output.spatialPerZone, 2);
    EXPECT_TRUE(scene->output.hrtfPath.empty());
    EXPECT_FALSE(scene->output.reflectionsInPhase);
    ASSERT_EQ(scene->sources.size(), 1u);
    ASSERT_EQ(scene->receivers.size(), 1u);
    const Receiver& r = scene->receivers[0];
    EXPECT_EQ(r.facingSource, "S");  // default: the first source
    EXPECT_TRUE(r.facing.isApprox((Vec3(2, 1.5, 2) - Vec3(6, 1.2, 8)).normalized()));
    EXPECT_EQ(r.definedAt.line, 7);
    // Material "concrete" comes from the built-in library; every triangle has it.
    ASSERT_EQ(scene->materials.size(), 1u);
    EXPECT_EQ(scene->materials[0].name, "concrete");
    EXPECT_EQ(scene->mesh.TriangleCount(), 12u);
    for (int m : scene->mesh.triangleMaterial) EXPECT_EQ(m, 0);
}

TEST(SceneLoader, ReadsEveryKey) {
    const std::string& toml = kEveryKey;
    const std::string path = WriteScene("every_key", toml);
    test::WriteFile(std::filesystem::path(path).parent_path().string(), "mats.csv",
                    "material,a125,a250,a500,a1k,a2k,a4k,s125,s250,s500,s1k,s2k,s4k\n"
                    "mine,0.1,0.1,0.1,0.1,0.1,0.1,0.2,0.2,0.2,0.2,0.2,0.2\n");
    test::WriteFile(std::filesystem::path(path).parent_path().string(), "ears.sofa", "opened by simulate, not here");
    Diagnostics diag;
    auto scene = LoadScene(path, diag);
    ASSERT_TRUE(scene) << diag.ToString();
    EXPECT_FALSE(diag.HasErrors());
    EXPECT_EQ(scene->title, "Test hall");
    EXPECT_DOUBLE_EQ(scene->air.temperatureC, 12.5);
    EXPECT_DOUBLE_EQ(scene->air.humidityPct, 70);
    EXPECT_DOUBLE_EQ(scene->air.pressureKPa, 95);
    ASSERT_EQ(scene->materials.size(), 1u);
    EXPECT_EQ(scene->materials[0].name, "mine");
    EXPECT_DOUBLE_EQ(scene->materials[0].scattering[3], 0.2);
    EXPECT_EQ(scene->receivers[0].zone, "stalls");
    EXPECT_TRUE(scene->receivers[0].facing.isApprox(Vec3(0, 0, -1)));
    EXPECT_EQ(scene->receivers[0].facingSource, "");
    EXPECT_EQ(scene->receivers[1].facingSource, "B");
    ASSERT_EQ(scene->seating.size(), 1u);
    EXPECT_DOUBLE_EQ(scene->seating[0].spacingM, 0.9);
    EXPECT_DOUBLE_EQ(scene->seating[0].earHeightM, 1.1);
    EXPECT_EQ(scene->seating[0].facing, "B");
    EXPECT_EQ(scene->seating[0].surfaces, (std::vector<std::string>{"floor"}));
    EXPECT_EQ(scene->settings.rays, 5000);
    EXPECT_EQ(scene->settings.imageOrder, 2);
    EXPECT_DOUBLE_EQ(*scene->settings.durationS, 1.5);
    EXPECT_EQ(scene->settings.sampleRate, 44100);
    EXPECT_EQ(scene->settings.seed, 7u);
    EXPECT_EQ(scene->settings.reportedBands, (std::vector<int>{0, 6, 7}));
    EXPECT_EQ(scene->review.venue, "theatre");
    EXPECT_DOUBLE_EQ(scene->review.flutterMaxAngleDeg, 5.0);
    EXPECT_DOUBLE_EQ(scene->speech.levelDb.value(), 66.0);
    EXPECT_DOUBLE_EQ(scene->speech.noiseOctaveDb.value()[3], 35.0);
    EXPECT_EQ(scene->output.spatialSeats, (std::vector<std::string>{"R", "Q"}));
    EXPECT_EQ(scene->output.spatialPerZone, 3);
    EXPECT_EQ(std::filesystem::path(scene->output.hrtfPath).filename(), "ears.sofa");
    EXPECT_TRUE(scene->output.reflectionsInPhase);
}

TEST(SceneLoader, RejectsUnknownKeysWithDidYouMean) {
    Diagnostics diag;
    ParseSceneToml(kMinimal + "[air]\ntemprature_c = 20\n[simulaton]\nrays = 3\n", "hall.toml", diag);
    EXPECT_TRUE(HasError(diag, "hall.toml", 10, "unknown key 'temprature_c' in [air] (did you mean \"temperature_c\"?)"));
    EXPECT_TRUE(HasError(diag, "hall.toml", 11, "unknown key 'simulaton' in the scene file (top level) (did you mean \"simulation\"?)"));
    Diagnostics inBlock;
    ParseSceneToml(kMinimal + "postion = [1, 2, 3]\n", "hall.toml", inBlock);
    EXPECT_TRUE(HasError(inBlock, "hall.toml", 9, "unknown key 'postion' in [[receiver]] (did you mean \"position\"?)"));
    // A section the schema does not have is rejected as a whole; a known section checks its keys.
    Diagnostics later;
    ParseSceneToml(kMinimal + "[export]\nwav = true\n", "hall.toml", later);
    EXPECT_TRUE(HasError(later, "hall.toml", 9, "unknown key 'export'"));
    Diagnostics output;
    ParseSceneToml(kMinimal + "[output]\nspatial_seat = [\"R\"]\n", "hall.toml", output);
    EXPECT_TRUE(HasError(output, "hall.toml", 10, "unknown key 'spatial_seat' in [output] (did you mean \"spatial_seats\"?)"));
}

// A key added to the schema must also be added to kEveryKey (and checked in ReadsEveryKey).
TEST(SceneLoader, EverySchemaKeyIsCoveredByTheEveryKeyScene) {
    for (const auto& section : SceneSchema()) {
        std::set<std::string> unique(section.keys.begin(), section.keys.end());
        EXPECT_EQ(unique.size(), section.keys.size()) << section.name;
        for (const auto& key : section.keys) {
            const bool isSection = section.name.empty() && key != "title";
            const std::string pattern = isSection ? "[" + key : "\n" + key + " = ";
            const std::string asTable = "[" + section.name + "." + key + "]";
            EXPECT_TRUE(("\n" + kEveryKey).find(pattern) != std::string::npos ||
                        kEveryKey.find(asTable) != std::string::npos)
                << section.name << "." << key;
        }
    }
}

TEST(SceneLoader, RejectsDuplicateSourceAndReceiverNames) {
    Diagnostics diag;
    ParseSceneToml(kMinimal + "[[source]]\nname = \"S\"\nposition = [1, 1, 1]\n"
                              "[[receiver]]\nname = \"R\"\nposition = [1, 1, 1]\n",
                   "hall.toml", diag);
    EXPECT_TRUE(HasError(diag, "hall.toml", 10, "source name 'S' is used twice (first at line 4)"));
    EXPECT_TRUE(HasError(diag, "hall.toml", 13, "receiver name 'R' is used twice (first at line 7)"));
}

TEST(SceneLoader, RejectsMissingRequiredParts) {
    Diagnostics diag;
    ParseSceneToml("[air]\nhumidity_pct = 40\n", "hall.toml", diag);
    EXPECT_TRUE(HasError(diag, "hall.toml", 1, "missing [model] section"));
    EXPECT_TRUE(HasError(diag, "hall.toml", 1, "no source"));
    EXPECT_TRUE(HasError(diag, "hall.toml", 1, "no receiver"));
    Diagnostics noMesh;
    ParseSceneToml("[model]\nunits = \"mm\"\n[[source]]\nposition = [0, 0, 0]\n[[receiver]]\nposition = [1, 1, 1]\n",
                   "hall.toml", noMesh);
    EXPECT_TRUE(HasError(noMesh, "hall.toml", 1, "[model] has no mesh"));
    Diagnostics noPos;
    ParseSceneToml(kMinimal + "[[source]]\nname = \"T\"\n", "hall.toml", noPos);
    EXPECT_TRUE(HasError(noPos, "hall.toml", 10, "source 'T' has no position"));
}

TEST(SceneLoader, RejectsBadValuesWithLineAndColumn) {
    Diagnostics diag;
    ParseSceneToml("[model]\nmesh = \"box.obj\"\nunits = \"meter\"\nup = \"x\"\n"
                   "[[source]]\nposition = [0, nan, 0]\n"
                   "[[receiver]]\nposition = [1, 1]\nfacing = \"stage\"\n"
                   "[simulation]\nrays = -5\nbands = [125, 300]\nsample_rate = \"fast\"\n",
                   "hall.toml", diag);
    EXPECT_TRUE(HasError(diag, "hall.toml", 3, "units in [model] is \"meter\"; use one of m, cm, mm, in, ft"));
    EXPECT_TRUE(HasError(diag, "hall.toml", 4, "up in [model] is \"x\""));
    EXPECT_TRUE(HasError(diag, "hall.toml", 6, "position of source 'S1': component 2 is not a finite number"));
    EXPECT_TRUE(HasError(diag, "hall.toml", 8, "position of receiver 'R1' must be three numbers"));
    EXPECT_TRUE(HasError(diag, "hall.toml", 11, "rays in [simulation] is -5"));
    EXPECT_TRUE(HasError(diag, "hall.toml", 12, "bands: each entry must be an octave band"));
    EXPECT_TRUE(HasError(diag, "hall.toml", 13, "sample_rate in [simulation] must be a whole number"));
    for (const auto& d : diag.Items()) EXPECT_GT(d.at.col, 0) << FormatDiagnostic(d);
}

TEST(SceneLoader, RejectsFacingAnUnknownSource) {
    Diagnostics diag;
    ParseSceneToml(kMinimal + "facing = \"s\"\n", "hall.toml", diag);
    EXPECT_TRUE(HasError(diag, "hall.toml", 9, "facing of receiver 'R' names source 's', which is not defined (did you mean \"S\"?)"));
}

TEST(SceneLoader, RejectsTomlSyntaxErrorsAndUnreadableEmptyBinaryFiles) {
    Diagnostics diag;
    ParseSceneToml("[model]\nmesh = \"box.obj\n", "hall.toml", diag);
    EXPECT_TRUE(HasError(diag, "hall.toml", 2, "TOML syntax"));
    const std::string dir = test::TempDir("scene_loader/files");
    Diagnostics files;
    EXPECT_FALSE(LoadScene(dir + "/none.toml", files));
    EXPECT_TRUE(HasError(files, dir + "/none.toml", 0, "cannot read scene file"));
    const std::string empty = test::WriteFile(dir, "empty.toml", "");
    EXPECT_FALSE(LoadScene(empty, files));
    EXPECT_TRUE(HasError(files, empty, 0, "is empty"));
    const std::string binary = test::WriteFile(dir, "bin.toml", std::string("\x89PNG\r\n\x1a\n\0\0", 10));
    EXPECT_FALSE(LoadScene(binary, files));
    EXPECT_TRUE(HasError(files, binary, 0, "is a binary file"));
}

TEST(SceneLoader, MissingMeshOrTableIsReportedAtTheSceneLine) {
    const std::string path = WriteScene("missing_files", "[model]\nmesh = \"gone.obj\"\n[materials]\ntables = [\"gone.csv\"]\n"
                                                         "[[source]]\nposition = [1, 1, 1]\n[[receiver]]\nposition = [2, 1, 2]\n");
    Diagnostics diag;
    EXPECT_FALSE(LoadScene(path, diag));
    EXPECT_TRUE(HasError(diag, path, 2, "cannot read OBJ model"));
    EXPECT_TRUE(HasError(diag, path, 4, "cannot read materials table"));
}

TEST(SceneLoader, UndefinedMaterialNamesTheUsemtlLine) {
    const std::string path = WriteScene("undefined_material", kMinimal, BoxObj(8, 4, 10, 1, false, "concret"));
    Diagnostics diag;
    EXPECT_FALSE(LoadScene(path, diag));
    const std::string obj = std::filesystem::path(path).parent_path().string() + "/box.obj";
    EXPECT_TRUE(HasError(diag, obj, 10, "material (usemtl) 'concret' is not defined in the built-in library (did you mean \"concrete\"?)"));
}

TEST(SceneLoader, AssignMapsUsemtlNamesAndReportsBadOrUnusedEntries) {
    const std::string good = WriteScene("assign_good", kMinimal + "[materials.assign]\nMAT_01 = \"plaster\"\n",
                                        BoxObj(8, 4, 10, 1, false, "MAT_01"));
    Diagnostics diag;
    auto scene = LoadScene(good, diag);
    ASSERT_TRUE(scene) << diag.ToString();
    EXPECT_EQ(scene->materials.at(0).name, "plaster");

    const std::string bad = WriteScene("assign_bad", kMinimal + "[materials.assign]\nMAT_01 = \"plastr\"\nMAT_02 = \"glass_heavy\"\n",
                                       BoxObj(8, 4, 10, 1, false, "MAT_01"));
    Diagnostics badDiag;
    EXPECT_FALSE(LoadScene(bad, badDiag));
    EXPECT_TRUE(HasError(badDiag, bad, 10, "[materials.assign] maps 'MAT_01' to 'plastr', which is not in the built-in library (did you mean \"plaster\"?)"));
    EXPECT_TRUE(test::HasMessage(badDiag, Severity::kWarning, bad, 11, "'MAT_02' matches no usemtl in box.obj"));
}

TEST(SceneLoader, FacesWithoutUsemtlNeedAMaterialNamedDefault) {
    const std::string obj = "v 0 0 0\nv 1 0 0\nv 0 1 0\nv 0 0 1\nf 1 3 2\nf 1 2 4\nusemtl glass_heavy\nf 1 4 3\nf 2 3 4\n";
    const std::string path = WriteScene("no_usemtl", kMinimal, obj);
    const std::string objPath = std::filesystem::path(path).parent_path().string() + "/box.obj";
    Diagnostics diag;
    EXPECT_FALSE(LoadScene(path, diag));
    EXPECT_TRUE(HasError(diag, objPath, 5, "2 face(s) have no usemtl (the first is on this line) and no material named 'default'"));
    const std::string mapped = WriteScene("no_usemtl_default", kMinimal + "[materials.assign]\ndefault = \"concrete\"\n", obj);
    Diagnostics ok;
    auto scene = LoadScene(mapped, ok);
    ASSERT_TRUE(scene) << ok.ToString();
    EXPECT_EQ(scene->materials.size(), 2u);
    EXPECT_EQ(scene->materials[scene->mesh.triangleMaterial[0]].name, "concrete");
    EXPECT_EQ(scene->materials[scene->mesh.triangleMaterial[2]].name, "glass_heavy");
}

// Units: a model drawn in millimetres (all lengths x1000, scene positions too) loads into the
// same metres as the metre model.
TEST(SceneLoader, MillimetreModelEqualsMetreModel) {
    const std::string mm =
        "[model]\nmesh = \"box.obj\"\nunits = \"mm\"\n"
        "[[source]]\nname = \"S\"\nposition = [2000, 1500, 2000]\n"
        "[[receiver]]\nname = \"R\"\nposition = [6000, 1200, 8000]\n"
        "[[seating]]\nsurfaces = [\"floor\"]\nspacing_m = 0.9\near_height_m = 1.1\n";  // _m keys: metres
    const std::string m = kMinimal + "[[seating]]\nsurfaces = [\"floor\"]\nspacing_m = 0.9\near_height_m = 1.1\n";
    Diagnostics diag;
    auto a = LoadScene(WriteScene("units_m", m), diag);
    auto b = LoadScene(WriteScene("units_mm", mm, BoxObj(8, 4, 10, 1000.0)), diag);
    ASSERT_TRUE(a && b) << diag.ToString();
    ASSERT_EQ(a->mesh.vertices.size(), b->mesh.vertices.size());
    for (size_t i = 0; i < a->mesh.vertices.size(); ++i)
        EXPECT_LT((a->mesh.vertices[i] - b->mesh.vertices[i]).norm(), 1e-9) << i;
    EXPECT_LT((a->sources[0].position - b->sources[0].position).norm(), 1e-12);
    EXPECT_LT((a->receivers[0].position - b->receivers[0].position).norm(), 1e-12);
    EXPECT_NEAR(a->seating[0].spacingM, b->seating[0].spacingM, 1e-12);
    EXPECT_NEAR(a->seating[0].earHeightM, b->seating[0].earHeightM, 1e-12);
    // Round trip back into model units.
    EXPECT_TRUE(b->ToModel(b->sources[0].position).isApprox(Vec3(2000, 1500, 2000)));
    // Inches and feet: 1 in = 0.0254 m, 1 ft = 0.3048 m exactly (international yard, 1959).
    EXPECT_DOUBLE_EQ(ModelUnitScale("in"), 0.0254);
    EXPECT_DOUBLE_EQ(ModelUnitScale("ft"), 0.3048);
    EXPECT_DOUBLE_EQ(ModelUnitScale("cm"), 0.01);
}

TEST(SceneLoader, NoiseNeedsEightOctaveLevels) {
    Diagnostics diag;
    ParseSceneToml("[model]\nmesh = \"box.obj\"\n[[source]]\nposition = [1, 1, 1]\n"
                   "[noise]\noctave_db = [40, 35]\n",
                   "hall.toml", diag);
    EXPECT_TRUE(HasError(diag, "hall.toml", 6, "octave_db in [noise] must list 8 octave levels"));
}

// spacing_m is metres whatever the model units: a value written in millimetres is refused.
TEST(SceneLoader, SeatSpacingInTheWrongUnitsIsAnError) {
    Diagnostics diag;
    ParseSceneToml("[model]\nmesh = \"box.obj\"\nunits = \"mm\"\n[[source]]\nposition = [1, 1, 1]\n"
                   "[[seating]]\nsurfaces = [\"floor\"]\nspacing_m = 900\n",
                   "hall.toml", diag);
    EXPECT_TRUE(HasError(diag, "hall.toml", 8, "spacing_m in [[seating]] #1 is 900 m; seat spacing must be 0.3..50 m"));
}

// up = "z": the rotation (x, y, z) -> (x, z, -y). The model is the same box drawn z-up; the
// loaded mesh and positions equal the y-up ones.
TEST(SceneLoader, ZUpModelEqualsYUpModel) {
    const std::string zUp =
        "[model]\nmesh = \"box.obj\"\nup = \"z\"\n"
        "[[source]]\nname = \"S\"\nposition = [2, -2, 1.5]\n"
        "[[receiver]]\nname = \"R\"\nposition = [6, -8, 1.2]\nfacing = [0, 1, 0]\n";
    Diagnostics diag;
    auto a = LoadScene(WriteScene("up_y", kMinimal), diag);
    auto b = LoadScene(WriteScene("up_z", zUp, BoxObj(8, 4, 10, 1.0, true)), diag);
    ASSERT_TRUE(a && b) << diag.ToString();
    for (size_t i = 0; i < a->mesh.vertices.size(); ++i)
        EXPECT_LT((a->mesh.vertices[i] - b->mesh.vertices[i]).norm(), 1e-9) << i;
    EXPECT_LT((a->sources[0].position - b->sources[0].position).norm(), 1e-12);
    EXPECT_LT((a->receivers[0].position - b->receivers[0].position).norm(), 1e-12);
    // Model +y (horizontal in a z-up model) is internal -z.
    EXPECT_TRUE(b->receivers[0].facing.isApprox(Vec3(0, 0, -1)));
    EXPECT_TRUE(b->ToModel(b->receivers[0].position).isApprox(Vec3(6, -8, 1.2)));
    EXPECT_TRUE(b->DirectionToModel(b->DirectionFromModel(Vec3(0.3, -0.2, 0.9))).isApprox(Vec3(0.3, -0.2, 0.9)));
}

// Handedness: in a right-handed z-up model a listener at the origin faces a source along +y;
// a point at x = -2 is on the listener's LEFT (right = forward x up = +y x +z = +x). After the
// conversion to the internal y-up frame it must still be on the left (right = forward x +y).
// The axis swap (x, y, z) -> (x, z, y) would mirror it to the right: the check can fail.
TEST(SceneLoader, ZUpConversionKeepsLeftOnTheLeft) {
    Scene s;
    s.modelUp = "z";
    const Vec3 listener = s.FromModel(Vec3(0, 0, 1.2));
    const Vec3 source = s.FromModel(Vec3(0, 10, 1.2));
    const Vec3 leftPoint = s.FromModel(Vec3(-2, 0, 1.2));
    const Vec3 up = s.DirectionFromModel(Vec3(0, 0, 1));
    EXPECT_TRUE(up.isApprox(Vec3::UnitY()));
    const Vec3 forward = (source - listener).normalized();
    const Vec3 right = forward.cross(Vec3::UnitY());
    EXPECT_LT((leftPoint - listener).dot(right), 0);  // still on the left

    auto swap = [](const Vec3& p) { return Vec3(p.x(), p.z(), p.y()); };  // the mirror, for contrast
    const Vec3 fSwap = (swap(Vec3(0, 10, 1.2)) - swap(Vec3(0, 0, 1.2))).normalized();
    EXPECT_GT((swap(Vec3(-2, 0, 1.2)) - swap(Vec3(0, 0, 1.2))).dot(fSwap.cross(Vec3::UnitY())), 0);
    // The rotation matrix has determinant +1.
    Eigen::Matrix3d r;
    for (int k = 0; k < 3; ++k) r.col(k) = s.DirectionFromModel(Vec3::Unit(k));
    EXPECT_NEAR(r.determinant(), 1.0, 1e-15);
}

}  // namespace
}  // namespace hallwright
