#include "hallwright/image_sources.h"

#include <gtest/gtest.h>
#include <tbb/task_arena.h>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <map>
#include <sstream>

#include "hallwright/air.h"
#include "hallwright/paths_csv.h"
#include "test_support.h"

namespace hallwright {
namespace {

using test::MakeBoxScene;
using test::UniformMaterial;

/* A scene and its geometry, built in memory (Geometry refers to scene.mesh, so both live on
   the heap together). */
struct BuiltRoom {
    std::unique_ptr<Room> room = std::make_unique<Room>();
    Diagnostics diag;
    const Scene& scene() const { return room->scene; }
    const Geometry& geometry() const { return room->geometry; }
};

std::unique_ptr<BuiltRoom> Build(Scene scene) {
    auto b = std::make_unique<BuiltRoom>();
    b->room->scene = std::move(scene);
    auto g = Geometry::Build(b->room->scene, b->diag);
    if (!g) return nullptr;
    b->room->geometry = std::move(*g);
    return b;
}

void AddSource(Scene& s, const std::string& name, const Vec3& p) {
    Source src;
    src.name = name;
    src.position = p;
    s.sources.push_back(src);
}

void AddReceiver(Scene& s, const std::string& name, const Vec3& p) {
    Receiver r;
    r.name = name;
    r.position = p;
    r.facing = Vec3(1, 0, 0);
    s.receivers.push_back(r);
}

/* Appends quad a-b-c-d as two triangles wound so their normal points along `inward`. */
void AddQuad(Mesh& m, Vec3 a, Vec3 b, Vec3 c, Vec3 d, const Vec3& inward, int material, int group) {
    if ((b - a).cross(c - a).dot(inward) < 0) std::swap(b, d);
    const uint32_t base = static_cast<uint32_t>(m.vertices.size());
    for (const Vec3& p : {a, b, c, d}) m.vertices.push_back(p);
    for (auto tri : {std::array<uint32_t, 3>{base, base + 1, base + 2}, std::array<uint32_t, 3>{base, base + 2, base + 3}}) {
        m.triangles.push_back(tri);
        m.triangleMaterial.push_back(material);
        m.triangleGroup.push_back(group);
        m.triangleLine.push_back(static_cast<int>(m.triangles.size()));
    }
}

/* Options for a test; the accelerated runs exercise the ray-guided search itself (no switch
   to full enumeration for small trees) unless a test says otherwise. */
ImageSourceOptions Options(int order, bool exhaustive, bool air = true) {
    ImageSourceOptions o;
    o.order = order;
    o.exhaustive = exhaustive;
    o.airAbsorption = air;
    if (!exhaustive) o.fullEnumerationLimit = 0;
    return o;
}

std::vector<std::string> GroupsOf(const Geometry& g, const SpecularPath& p) {
    std::vector<std::string> out;
    for (int f : p.faces) out.push_back(g.GetMesh().groupNames[g.Faces()[f].group]);
    return out;
}

// ---------------------------------------------------------------------------------------------
// Shoebox against the closed form of Allen & Berkley 1979 (REFERENCES Part A §3): images at
// x = 2 n Lx + (1 - 2q) xs (likewise y, z), wall x=0 met |n - q| times, wall x=Lx |n| times;
// pressure beta^N / (4 pi d) with beta = sqrt(1 - alpha). In the energy units of
// propagation.h (unit-energy source: 1/(4 pi d^2)) that is E = 4 pi p^2 = (1-alpha)^N/(4 pi d^2).

struct ClosedFormImage {
    Vec3 position;
    int order;
    std::map<std::string, int> hits;  // wall group -> number of reflections
};

std::vector<ClosedFormImage> AllenBerkleyImages(const Vec3& L, const Vec3& s, int maxOrder) {
    const char* low[3] = {"x0", "y0", "z0"};
    const char* high[3] = {"x1", "y1", "z1"};
    std::vector<ClosedFormImage> out;
    // Per axis: (coordinate, hits on the low wall, hits on the high wall).
    std::vector<std::array<double, 3>> axis[3];
    for (int a = 0; a < 3; ++a)
        for (int n = -maxOrder; n <= maxOrder; ++n)
            for (int q = 0; q <= 1; ++q) {
                const int hitsLow = std::abs(n - q), hitsHigh = std::abs(n);
                if (hitsLow + hitsHigh > maxOrder) continue;
                axis[a].push_back({2.0 * n * L[a] + (1 - 2 * q) * s[a], double(hitsLow), double(hitsHigh)});
            }
    for (const auto& x : axis[0])
        for (const auto& y : axis[1])
            for (const auto& z : axis[2]) {
                const std::array<double, 3>* ax[3] = {&x, &y, &z};
                ClosedFormImage im;
                im.position = Vec3(x[0], y[0], z[0]);
                im.order = 0;
                for (int a = 0; a < 3; ++a) {
                    const int lo = int((*ax[a])[1]), hi = int((*ax[a])[2]);
                    im.order += lo + hi;
                    if (lo) im.hits[low[a]] = lo;
                    if (hi) im.hits[high[a]] = hi;
                }
                if (im.order <= maxOrder) out.push_back(im);
            }
    return out;
}

// The room of REFERENCES Part A §3: [0,20] x [0,15] x [0,10], S = (4, 5, 1.5), R = (14, 9, 1.2),
// alpha = 0.1. The frame of the check is used as is (which axis is "up" does not matter).
std::unique_ptr<BuiltRoom> AllenBerkleyRoom(double alpha, double scattering) {
    Scene s = MakeBoxScene(20, 15, 10, UniformMaterial("wall", alpha, scattering));
    AddSource(s, "S", Vec3(4, 5, 1.5));
    AddReceiver(s, "R", Vec3(14, 9, 1.2));
    return Build(std::move(s));
}

void ExpectShoeboxMatchesClosedForm(bool exhaustive, double alpha, double scattering) {
    auto b = AllenBerkleyRoom(alpha, scattering);
    ASSERT_TRUE(b);
    Diagnostics diag;
    ImageSourceStats stats;
    const auto result = ComputeImageSources(*b->room, 0, Options(3, exhaustive, /*air=*/false), diag, &stats);
    ASSERT_FALSE(diag.HasErrors()) << diag.ToString();
    EXPECT_EQ(stats.searchRays, exhaustive ? 0 : ImageSourceOptions().searchRays);
    ASSERT_EQ(result.size(), 1u);
    const ReceiverPaths& rp = result[0];
    EXPECT_FALSE(rp.directOccluded);

    const Vec3 R(14, 9, 1.2);
    const double c = SpeedOfSound(20.0);
    auto images = AllenBerkleyImages(Vec3(20, 15, 10), Vec3(4, 5, 1.5), 3);
    std::sort(images.begin(), images.end(), [&](const ClosedFormImage& a, const ClosedFormImage& b2) {
        return (a.position - R).norm() < (b2.position - R).norm();
    });
    // Images of order N: 4N^2 + 2 (REFERENCES Part A §3, computed): 1 + 6 + 18 + 38 = 63.
    int perOrder[4] = {0, 0, 0, 0};
    for (const auto& im : images) ++perOrder[im.order];
    ASSERT_EQ(perOrder[0], 1);
    ASSERT_EQ(perOrder[1], 6);
    ASSERT_EQ(perOrder[2], 18);
    ASSERT_EQ(perOrder[3], 38);

    ASSERT_EQ(rp.paths.size(), images.size());
    const double perReflection = (1 - alpha) * (1 - scattering);
    for (size_t i = 0; i < images.size(); ++i) {
        const SpecularPath& p = rp.paths[i];
        const ClosedFormImage& im = images[i];
        const double d = (im.position - R).norm();
        EXPECT_EQ(p.order, im.order) << i;
        EXPECT_NEAR(p.delayS, d / c, 1e-12) << i;
        EXPECT_NEAR(p.lengthM, d, 1e-9) << i;
        const double expected = std::pow(perReflection, im.order) / (4 * M_PI * d * d);
        for (int band = 0; band < kBandCount; ++band)
            EXPECT_NEAR(p.energy[band] / expected, 1.0, 1e-9) << i << " band " << band;
        // The sound arrives from the direction of the image (the last leg points at it).
        EXPECT_NEAR((p.arrivalFrom - (im.position - R) / d).norm(), 0.0, 1e-12) << i;
        std::map<std::string, int> hits;
        for (const std::string& g : GroupsOf(b->geometry(), p)) ++hits[g];
        EXPECT_EQ(hits, im.hits) << i;
        for (size_t k = 1; k < p.faces.size(); ++k) EXPECT_NE(p.faces[k], p.faces[k - 1]);
    }
}

TEST(ImageSources, ShoeboxExhaustiveMatchesAllenBerkleyToOrder3) {
    ExpectShoeboxMatchesClosedForm(/*exhaustive=*/true, 0.1, 0.0);
}

TEST(ImageSources, ShoeboxAcceleratedMatchesAllenBerkleyToOrder3) {
    ExpectShoeboxMatchesClosedForm(/*exhaustive=*/false, 0.1, 0.0);
}

// With scattering the specular share per reflection is (1 - alpha)(1 - s) (ISO 17497-1: s is
// the fraction of the reflected energy that is not reflected specularly).
TEST(ImageSources, ShoeboxWithScatteringKeepsTheSpecularShare) {
    ExpectShoeboxMatchesClosedForm(/*exhaustive=*/true, 0.3, 0.4);
}

// The table of REFERENCES Part A §3 (computed there from the closed form): first-order images
// of the same room, d, delay and beta / (4 pi d) at alpha = 0.1, to the printed digits.
TEST(ImageSources, ShoeboxFirstOrderImagesMatchTheReferenceTable) {
    auto b = AllenBerkleyRoom(0.1, 0.0);
    ASSERT_TRUE(b);
    Diagnostics diag;
    const auto result = ComputeImageSources(*b->room, 0, Options(1, true, false), diag);
    ASSERT_EQ(result.size(), 1u);
    struct Row {
        const char* wall;
        double d, delayMs, amplitude, levelDb;  // amplitude: as printed, not checked (below)
    };
    const Row rows[] = {{"x0", 18.4415, 53.734, 0.0040940, -5.126}, {"x1", 22.3627, 65.159, 0.0033760, -6.800},
                        {"y0", 17.2073, 50.138, 0.0043874, -4.524}, {"y1", 18.8703, 54.984, 0.0040008, -5.325},
                        {"z0", 11.1036, 32.353, 0.0067989, -0.719}, {"z1", 20.3787, 59.378, 0.0037046, -5.993}};
    ASSERT_EQ(result[0].paths.size(), 7u);
    const SpecularPath& direct = result[0].paths[0];
    ASSERT_EQ(direct.order, 0);
    EXPECT_NEAR(direct.lengthM, 10.7745, 0.5e-4);
    EXPECT_NEAR(direct.delayS * 1e3, 31.394, 0.5e-3);
    // Pressure amplitude of the closed form: sqrt(E / (4 pi)).
    EXPECT_NEAR(std::sqrt(direct.energy[4] / (4 * M_PI)), 0.0073857, 0.5e-7);
    for (const Row& row : rows) {
        const SpecularPath* found = nullptr;
        for (const SpecularPath& p : result[0].paths)
            if (p.order == 1 && GroupsOf(b->geometry(), p)[0] == row.wall) found = &p;
        ASSERT_TRUE(found) << row.wall;
        EXPECT_NEAR(found->lengthM, row.d, 0.5e-4) << row.wall;
        EXPECT_NEAR(found->delayS * 1e3, row.delayMs, 0.5e-3) << row.wall;
        // The sheet's amplitude column differs from beta / (4 pi d) of its own d column in the
        // 5th digit for five rows (e.g. x=0: 0.948683 / (4 pi 18.4415) = 0.0040937, printed
        // 0.0040940); its d, delay and level columns agree with each other. So the amplitude is
        // checked as beta / (4 pi d_table), within the rounding of d_table (half a unit in the
        // 4th decimal) and of the printed digits.
        const double beta = std::sqrt(0.9);
        const double fromTable = beta / (4 * M_PI * row.d);
        EXPECT_NEAR(std::sqrt(found->energy[4] / (4 * M_PI)), fromTable, fromTable * 0.5e-4 / row.d + 0.5e-7)
            << row.wall;
        EXPECT_NEAR(10 * std::log10(found->energy[4] / direct.energy[4]), row.levelDb, 0.5e-3) << row.wall;
    }
}

// ---------------------------------------------------------------------------------------------
// Free field: a box 400 m across with alpha = 1 reflects nothing, so only the direct sound is
// left: 1/(4 pi r^2) (the unit of propagation.h) times the ISO 9613-1 air loss.

TEST(ImageSources, FreeFieldDirectSoundWithIso9613AirLoss) {
    Scene s = MakeBoxScene(400, 400, 400, UniformMaterial("anechoic", 1.0, 0.0));
    s.air = AirConditions{20.0, 50.0, 101.325};
    const Vec3 src(200, 200, 200);
    AddSource(s, "S", src);
    const double distances[] = {10, 20, 100};
    for (double r : distances) AddReceiver(s, "R" + std::to_string(int(r)), src + Vec3(0.6, 0.0, 0.8) * r);
    auto b = Build(std::move(s));
    ASSERT_TRUE(b);
    Diagnostics diag;
    const auto withAir = ComputeImageSources(*b->room, 0, Options(2, true, true), diag);
    const auto noAir = ComputeImageSources(*b->room, 0, Options(2, true, false), diag);
    ASSERT_FALSE(diag.HasErrors()) << diag.ToString();
    ASSERT_EQ(withAir.size(), 3u);
    // ISO 9613-1 at 20 degC / 50 % RH, exact midbands, dB/km (REFERENCES Part A §1, computed
    // from the standard's formula; 3 significant digits, so the check allows half a unit of
    // the last printed digit, times the distance).
    const double tableDbPerKm[kBandCount] = {0.123, 0.445, 1.32, 2.73, 4.66, 9.86, 29.4, 104};
    for (int i = 0; i < 3; ++i) {
        const double r = distances[i];
        ASSERT_EQ(withAir[i].paths.size(), 1u) << r;
        ASSERT_EQ(noAir[i].paths.size(), 1u) << r;
        const SpecularPath& p = withAir[i].paths[0];
        EXPECT_EQ(p.order, 0);
        EXPECT_FALSE(withAir[i].directOccluded);
        EXPECT_NEAR(p.delayS, r / 343.2, 1e-12);  // c = 343.2 m/s at 20 degC (ISO 9613-1)
        EXPECT_NEAR((p.arrivalFrom + Vec3(0.6, 0.0, 0.8)).norm(), 0.0, 1e-12);
        const Bands m = AirEnergyAttenuationPerM(AirConditions{20.0, 50.0, 101.325});
        for (int band = 0; band < kBandCount; ++band) {
            const double spreading = 1.0 / (4 * M_PI * r * r);
            EXPECT_NEAR(noAir[i].paths[0].energy[band] / spreading, 1.0, 1e-12);
            EXPECT_NEAR(p.energy[band] / (spreading * std::exp(-m[band] * r)), 1.0, 1e-12);
            const double lossDb = -10 * std::log10(p.energy[band] / spreading);
            const double v = tableDbPerKm[band];
            const double halfUnit = 0.5 * std::pow(10.0, std::floor(std::log10(v)) - 2);
            EXPECT_NEAR(lossDb, v * r / 1000.0, halfUnit * r / 1000.0) << "band " << band << " r " << r;
        }
    }
}

// ---------------------------------------------------------------------------------------------
// Occlusion and the point-in-face test: a thick free-standing partition with a window in the
// shoebox. Reflections off the room's walls must be exactly the shoebox paths whose legs miss
// the partition's solid part (checked here by sampling each leg against the solid); a
// reflection off the partition exists only where its reflection point is on the solid part.

constexpr double kWallX0 = 9.0, kWallX1 = 9.4;
constexpr double kOuterY0 = 0.3, kOuterY1 = 9.7, kOuterZ0 = 0.3, kOuterZ1 = 14.7;  // panel extent
constexpr double kWinY0 = 0.8, kWinY1 = 3.0, kWinZ0 = 4.0, kWinZ1 = 8.0;          // the window

/* y-up room [0,20] x [0,10] x [0,15]; the partition spans most of it across x = 9 .. 9.4. */
Scene PartitionScene(bool withPartition) {
    Scene s = MakeBoxScene(20, 10, 15, UniformMaterial("wall", 0.2, 0.0));
    if (!withPartition) return s;
    Mesh& m = s.mesh;
    const int g = static_cast<int>(m.groupNames.size());
    m.groupNames.push_back("partition");
    const double ys[4] = {kOuterY0, kWinY0, kWinY1, kOuterY1};
    const double zs[4] = {kOuterZ0, kWinZ0, kWinZ1, kOuterZ1};
    auto P = [&](double x, int iy, int iz) { return Vec3(x, ys[iy], zs[iz]); };
    // Front (x = 9, facing -x) and back (x = 9.4, facing +x): the ring between the outer
    // rectangle and the window, as four trapezoids.
    for (int side = 0; side < 2; ++side) {
        const double x = side ? kWallX1 : kWallX0;
        const Vec3 n(side ? 1 : -1, 0, 0);
        const int ring[4][2] = {{0, 0}, {3, 0}, {3, 3}, {0, 3}};     // outer corners (iy, iz)
        const int win[4][2] = {{1, 1}, {2, 1}, {2, 2}, {1, 2}};      // window corners
        for (int k = 0; k < 4; ++k) {
            const int k1 = (k + 1) % 4;
            AddQuad(m, P(x, ring[k][0], ring[k][1]), P(x, ring[k1][0], ring[k1][1]), P(x, win[k1][0], win[k1][1]),
                    P(x, win[k][0], win[k][1]), n, 0, g);
        }
    }
    // Outer rim and window reveals.
    auto Slab = [&](int iy0, int iz0, int iy1, int iz1, const Vec3& n) {
        AddQuad(m, P(kWallX0, iy0, iz0), P(kWallX1, iy0, iz0), P(kWallX1, iy1, iz1), P(kWallX0, iy1, iz1), n, 0, g);
    };
    Slab(0, 0, 0, 3, Vec3(0, -1, 0));  // bottom
    Slab(3, 0, 3, 3, Vec3(0, 1, 0));   // top
    Slab(0, 0, 3, 0, Vec3(0, 0, -1));  // z = 0.3 end
    Slab(0, 3, 3, 3, Vec3(0, 0, 1));   // z = 14.7 end
    Slab(1, 1, 1, 2, Vec3(0, 1, 0));   // window sill, faces up into the opening
    Slab(2, 1, 2, 2, Vec3(0, -1, 0));  // window head
    Slab(1, 1, 2, 1, Vec3(0, 0, 1));   // window jamb at z = 4
    Slab(1, 2, 2, 2, Vec3(0, 0, -1));  // window jamb at z = 8
    return s;
}

/* Signed depth of p inside the partition's solid (> 0 inside, metres), or a negative value. */
double DepthInSolid(const Vec3& p) {
    const double inSlab = std::min(p.x() - kWallX0, kWallX1 - p.x());
    const double inOuter = std::min({p.y() - kOuterY0, kOuterY1 - p.y(), p.z() - kOuterZ0, kOuterZ1 - p.z()});
    const double inWindow = std::min({p.y() - kWinY0, kWinY1 - p.y(), p.z() - kWinZ0, kWinZ1 - p.z()});
    return std::min({inSlab, inOuter, -inWindow});
}

enum class Leg { kFree, kBlocked, kBorderline };

/* Samples a leg every 1 mm. DepthInSolid changes by at most 1 m per m along the leg, so the
   sampled maximum is within 0.5 mm of the true one: more than 2 mm inside the solid means
   blocked, more than 2 mm clear of it free, anything else borderline (not asserted). */
Leg ClassifyLeg(const Vec3& a, const Vec3& b) {
    // Only the part of the leg within 1 cm of the slab kX0 <= x <= kX1 can be inside or near
    // the solid (elsewhere DepthInSolid <= -1 cm).
    constexpr double kNear = 0.01;
    double t0 = 0, t1 = 1;
    const double dx = b.x() - a.x();
    if (std::abs(dx) < 1e-12) {
        if (a.x() < kWallX0 - kNear || a.x() > kWallX1 + kNear) return Leg::kFree;
    } else {
        double ta = (kWallX0 - kNear - a.x()) / dx, tb = (kWallX1 + kNear - a.x()) / dx;
        if (ta > tb) std::swap(ta, tb);
        t0 = std::max(0.0, ta);
        t1 = std::min(1.0, tb);
        if (t0 > t1) return Leg::kFree;
    }
    const Vec3 p0 = a + (b - a) * t0, p1 = a + (b - a) * t1;
    const int n = std::max(2, static_cast<int>((p1 - p0).norm() / 1e-3));
    double deepest = -1e300;
    for (int i = 0; i <= n; ++i) deepest = std::max(deepest, DepthInSolid(p0 + (p1 - p0) * (double(i) / n)));
    if (deepest > 2e-3) return Leg::kBlocked;
    if (deepest < -2e-3) return Leg::kFree;
    return Leg::kBorderline;
}

/* Reflection points of a path in the axis-aligned box (test's own unfolding: mirror the
   source in each wall, then walk back from the receiver). */
std::vector<Vec3> BoxReflectionPoints(const Vec3& L, const Vec3& s, const Vec3& r, const std::vector<std::string>& walls) {
    std::vector<Vec3> images = {s};
    std::vector<std::pair<int, double>> planes;
    for (const std::string& w : walls) {
        const int axis = w[0] - 'x';
        const double at = w[1] == '0' ? 0.0 : L[axis];
        Vec3 im = images.back();
        im[axis] = 2 * at - im[axis];
        images.push_back(im);
        planes.push_back({axis, at});
    }
    std::vector<Vec3> points(walls.size());
    Vec3 q = r;
    for (int i = static_cast<int>(walls.size()) - 1; i >= 0; --i) {
        const auto [axis, at] = planes[i];
        const double t = (at - q[axis]) / (images[i + 1][axis] - q[axis]);
        q = q + t * (images[i + 1] - q);
        points[i] = q;
    }
    return points;
}

TEST(ImageSources, PartitionWithWindowBlocksExactlyTheLegsThroughItsSolidPart) {
    const Vec3 S(4, 1.5, 5);
    const std::vector<Vec3> receivers = {Vec3(14, 1.2, 9), Vec3(14, 1.2, 13), Vec3(6, 1.2, 9), Vec3(6, 1.2, 13)};
    auto makeRoom = [&](bool partition) {
        Scene s = PartitionScene(partition);
        AddSource(s, "S", S);
        for (size_t i = 0; i < receivers.size(); ++i) AddReceiver(s, "R" + std::to_string(i), receivers[i]);
        return Build(std::move(s));
    };
    auto empty = makeRoom(false), walled = makeRoom(true);
    ASSERT_TRUE(empty && walled);
    EXPECT_FALSE(walled->diag.HasErrors()) << walled->diag.ToString();
    EXPECT_TRUE(walled->geometry().IsClosed()) << walled->diag.ToString();
    Diagnostics diag;
    const auto plain = ComputeImageSources(*empty->room, 0, Options(3, true, false), diag);
    const auto blocked = ComputeImageSources(*walled->room, 0, Options(3, true, false), diag);
    ASSERT_FALSE(diag.HasErrors()) << diag.ToString();
    ASSERT_EQ(plain.size(), receivers.size());
    ASSERT_EQ(blocked.size(), receivers.size());

    // Direct sound: through the window to R0 (crossing x = 9 at z = 7), blocked to R1
    // (crossing at z = 9, beside the window); R2, R3 are on the source's side.
    EXPECT_FALSE(blocked[0].directOccluded);
    EXPECT_TRUE(blocked[1].directOccluded);
    EXPECT_FALSE(blocked[2].directOccluded);
    EXPECT_FALSE(blocked[3].directOccluded);
    EXPECT_TRUE(blocked[1].paths.empty() || blocked[1].paths[0].order > 0);

    int kept = 0, removed = 0;
    for (size_t r = 0; r < receivers.size(); ++r) {
        // Paths via the room's walls only, keyed by their face groups.
        std::map<std::vector<std::string>, const SpecularPath*> walledPaths;
        for (const SpecularPath& p : blocked[r].paths) {
            const auto groups = GroupsOf(walled->geometry(), p);
            if (std::find(groups.begin(), groups.end(), "partition") == groups.end()) walledPaths[groups] = &p;
        }
        for (const SpecularPath& p : plain[r].paths) {
            const auto groups = GroupsOf(empty->geometry(), p);
            std::vector<Vec3> pts = BoxReflectionPoints(Vec3(20, 10, 15), S, receivers[r], groups);
            pts.insert(pts.begin(), S);
            pts.push_back(receivers[r]);
            Leg verdict = Leg::kFree;
            for (size_t i = 0; i + 1 < pts.size(); ++i) {
                const Leg leg = ClassifyLeg(pts[i], pts[i + 1]);
                if (leg == Leg::kBlocked) verdict = Leg::kBlocked;
                if (leg == Leg::kBorderline && verdict == Leg::kFree) verdict = Leg::kBorderline;
            }
            auto it = walledPaths.find(groups);
            if (verdict == Leg::kFree) {
                ASSERT_NE(it, walledPaths.end()) << "receiver " << r << " order " << p.order;
                EXPECT_EQ(it->second->delayS, p.delayS);
                ++kept;
            } else if (verdict == Leg::kBlocked) {
                EXPECT_EQ(it, walledPaths.end()) << "receiver " << r << " order " << p.order;
                ++removed;
            }
            if (it != walledPaths.end()) walledPaths.erase(it);
        }
        EXPECT_TRUE(walledPaths.empty()) << "receiver " << r << ": paths that the empty room does not have";
    }
    EXPECT_GT(kept, 20);
    EXPECT_GT(removed, 20);

    // First-order reflection off the partition's face x = 9 (image of S at x = 14): for R2 the
    // reflection point (x = 9, y = 1.3125, z = 7.5) falls in the window, so there is none; for R3
    // it is at z = 10 on the solid part: d = |R3 - (14, 1.5, 5)|.
    auto partitionFirstOrder = [&](const ReceiverPaths& rp) {
        std::vector<const SpecularPath*> out;
        for (const SpecularPath& p : rp.paths)
            if (p.order == 1 && GroupsOf(walled->geometry(), p)[0] == "partition") out.push_back(&p);
        return out;
    };
    EXPECT_TRUE(partitionFirstOrder(blocked[2]).empty());
    const auto r3 = partitionFirstOrder(blocked[3]);
    ASSERT_EQ(r3.size(), 1u);
    EXPECT_NEAR(r3[0]->lengthM, (receivers[3] - Vec3(14, 1.5, 5)).norm(), 1e-12);
}

// An open panel (one quad, not part of a closed shell) reflects on both sides, whichever way
// it is wound: mirror image in its plane, d = |R - S'|.
TEST(ImageSources, OpenPanelReflectsOnBothSides) {
    for (double flip : {1.0, -1.0}) {
        Scene s = MakeBoxScene(20, 10, 15, UniformMaterial("wall", 0.2, 0.0));
        s.mesh.groupNames.push_back("panel");
        AddQuad(s.mesh, Vec3(6, 6, 4), Vec3(14, 6, 4), Vec3(14, 6, 11), Vec3(6, 6, 11), Vec3(0, flip, 0), 0, 6);
        AddSource(s, "S", Vec3(8, 2, 6));
        AddReceiver(s, "below", Vec3(12, 1.5, 9));
        AddReceiver(s, "above", Vec3(12, 8.5, 9));
        auto b = Build(std::move(s));
        ASSERT_TRUE(b);
        Diagnostics diag;
        const auto res = ComputeImageSources(*b->room, 0, Options(1, true, false), diag);
        ASSERT_EQ(res.size(), 2u);
        int panelPaths = 0;
        for (const SpecularPath& p : res[0].paths)
            if (p.order == 1 && GroupsOf(b->geometry(), p)[0] == "panel") {
                ++panelPaths;
                EXPECT_NEAR(p.lengthM, (Vec3(12, 1.5, 9) - Vec3(8, 10, 6)).norm(), 1e-12);
            }
        EXPECT_EQ(panelPaths, 1) << "flip " << flip;
        // The receiver above the panel cannot hear the source through it.
        EXPECT_TRUE(res[1].directOccluded);
        for (const SpecularPath& p : res[1].paths) EXPECT_NE(GroupsOf(b->geometry(), p)[0], "panel");
    }
}

bool SamePaths(const std::vector<ReceiverPaths>& a, const std::vector<ReceiverPaths>& b);

// ---------------------------------------------------------------------------------------------
// The ray-guided search against full enumeration (the exhaustive result is the reference: it
// examines every face sequence). Irregular room of scenes/irregular: 30 polygons, splayed
// walls, a stage platform and a balcony.

/* Worst ratio, over seats and bands, of the accelerated to the exhaustive specular energy
   summed over all paths of reflection order 1..maxOrder (the direct sound left out). Also
   checks that every accelerated path is an exhaustive one with identical numbers. */
double WorstEnergyShare(const std::vector<ReceiverPaths>& fast, const std::vector<ReceiverPaths>& full) {
    double worst = 1.0;
    EXPECT_EQ(fast.size(), full.size());
    for (size_t r = 0; r < fast.size() && r < full.size(); ++r) {
        std::map<std::vector<int>, const SpecularPath*> byFaces;
        Bands reference = Bands::Zero(), found = Bands::Zero();
        for (const SpecularPath& p : full[r].paths) {
            byFaces[p.faces] = &p;
            if (p.order > 0) reference += p.energy;
        }
        for (const SpecularPath& p : fast[r].paths) {
            auto it = byFaces.find(p.faces);
            if (it == byFaces.end()) {
                ADD_FAILURE() << "receiver " << r << ": accelerated path not found by full enumeration";
                continue;
            }
            EXPECT_EQ(p.delayS, it->second->delayS);
            EXPECT_TRUE((p.energy == it->second->energy).all());
            if (p.order > 0) found += p.energy;
        }
        for (int b = 0; b < kBandCount; ++b)
            if (reference[b] > 0) worst = std::min(worst, found[b] / reference[b]);
    }
    return worst;
}

TEST(ImageSources, RaySearchFindsNinetyNinePercentOfTheSpecularEnergyInTheIrregularRoom) {
    Diagnostics loadDiag;
    auto room = LoadRoom(test::SourcePath("scenes/irregular/scene.toml"), loadDiag);
    ASSERT_TRUE(room) << loadDiag.ToString();
    ASSERT_GE(room->geometry.Faces().size(), 25u);
    for (int source = 0; source < static_cast<int>(room->scene.sources.size()); ++source)
        for (int order = 1; order <= 3; ++order) {
            Diagnostics diag;
            const ImageSourceOptions fast = Options(order, false);
            ImageSourceStats stats;
            const auto a = ComputeImageSources(*room, source, fast, diag, &stats);
            EXPECT_FALSE(stats.enumeratedFully);
            const auto e = ComputeImageSources(*room, source, Options(order, true), diag);
            ASSERT_FALSE(diag.HasErrors()) << diag.ToString();
            // Requirement of the image-source issue: >= 99 % at every seat, orders 1-3.
            EXPECT_GE(WorstEnergyShare(a, e), 0.99) << "source " << source << " order " << order;
        }
}

// A tree within fullEnumerationLimit is enumerated instead of searched: the same paths as
// the exhaustive run, bit for bit.
TEST(ImageSources, SmallImageTreesAreEnumeratedFully) {
    Diagnostics loadDiag;
    auto room = LoadRoom(test::SourcePath("scenes/irregular/scene.toml"), loadDiag);
    ASSERT_TRUE(room) << loadDiag.ToString();
    Diagnostics diag;
    ImageSourceStats stats;
    ImageSourceOptions options = Options(2, false);
    options.fullEnumerationLimit = ImageSourceOptions().fullEnumerationLimit;
    const auto a = ComputeImageSources(*room, 0, options, diag, &stats);
    EXPECT_TRUE(stats.enumeratedFully);
    EXPECT_EQ(stats.searchRays, 0);
    const auto e = ComputeImageSources(*room, 0, Options(2, true), diag);
    EXPECT_TRUE(SamePaths(a, e));
}

// The demo theatre, every seat, both sources, order 3: the ray-guided search against full
// enumeration (release only: about a second).
TEST(ImageSourcesValidation, RaySearchFindsTheTheatresSpecularEnergy) {
    Diagnostics loadDiag;
    auto room = LoadRoom(test::SourcePath("scenes/theatre/scene.toml"), loadDiag);
    ASSERT_TRUE(room) << loadDiag.ToString();
    ASSERT_GT(room->scene.receivers.size(), 500u);
    for (int source = 0; source < static_cast<int>(room->scene.sources.size()); ++source) {
        Diagnostics diag;
        const ImageSourceOptions fast = Options(3, false);
        const auto a = ComputeImageSources(*room, source, fast, diag);
        const auto e = ComputeImageSources(*room, source, Options(3, true), diag);
        ASSERT_FALSE(diag.HasErrors()) << diag.ToString();
        EXPECT_GE(WorstEnergyShare(a, e), 0.99) << "source " << source;
    }
}

bool SamePaths(const std::vector<ReceiverPaths>& a, const std::vector<ReceiverPaths>& b) {
    if (a.size() != b.size()) return false;
    for (size_t i = 0; i < a.size(); ++i) {
        if (a[i].receiver != b[i].receiver || a[i].directOccluded != b[i].directOccluded ||
            a[i].paths.size() != b[i].paths.size())
            return false;
        for (size_t k = 0; k < a[i].paths.size(); ++k) {
            const SpecularPath &p = a[i].paths[k], &q = b[i].paths[k];
            if (p.order != q.order || p.delayS != q.delayS || p.faces != q.faces || !(p.energy == q.energy).all() ||
                p.arrivalFrom != q.arrivalFrom)
                return false;
        }
    }
    return true;
}

TEST(ImageSources, ResultsDoNotDependOnTheThreadCount) {
    Scene s = PartitionScene(true);
    AddSource(s, "S", Vec3(4, 1.5, 5));
    for (int i = 0; i < 12; ++i) AddReceiver(s, "R" + std::to_string(i), Vec3(2 + 1.5 * i, 1.2 + 0.5 * (i % 3), 3 + i));
    auto b = Build(std::move(s));
    ASSERT_TRUE(b);
    for (bool exhaustive : {true, false}) {
        auto run = [&](int threads) {
            tbb::task_arena arena(threads);
            return arena.execute([&] {
                Diagnostics diag;
                ImageSourceOptions o = Options(3, exhaustive);
                o.searchRays = 20000;
                return ComputeImageSources(*b->room, 0, o, diag);
            });
        };
        const auto one = run(1), two = run(2);
        EXPECT_TRUE(SamePaths(one, two)) << "exhaustive " << exhaustive;
        EXPECT_GT(one[0].paths.size(), 10u);
    }
}

// A subset of receivers gives the same paths as the full run, in the order asked for; the
// all-sources form runs each source once.
TEST(ImageSources, ReceiverSubsetsAndAllSources) {
    Scene s = PartitionScene(true);
    AddSource(s, "S", Vec3(4, 1.5, 5));
    AddSource(s, "T", Vec3(15, 2.5, 11));
    for (int i = 0; i < 5; ++i) AddReceiver(s, "R" + std::to_string(i), Vec3(3 + 3.0 * i, 1.2, 2 + 2.5 * i));
    auto b = Build(std::move(s));
    ASSERT_TRUE(b);
    Diagnostics diag;
    const ImageSourceOptions o = Options(2, true);
    const auto all = ComputeImageSources(b->scene(), b->geometry(), 0, {}, o, diag);
    const auto some = ComputeImageSources(b->scene(), b->geometry(), 0, {3, 1}, o, diag);
    ASSERT_EQ(some.size(), 2u);
    EXPECT_EQ(some[0].receiver, 3);
    EXPECT_EQ(some[1].receiver, 1);
    EXPECT_TRUE(SamePaths({some[0]}, {all[3]}));
    EXPECT_TRUE(SamePaths({some[1]}, {all[1]}));
    ImageSourceStats stats;
    const auto both = ComputeImageSourcesAllSources(*b->room, o, diag, &stats);
    ASSERT_EQ(both.size(), 2u);
    EXPECT_TRUE(SamePaths(both[0], all));
    EXPECT_EQ(both[1][0].source, 1);
    int64_t paths = 0;
    for (const auto& perSource : both)
        for (const auto& rp : perSource) paths += static_cast<int64_t>(rp.paths.size());
    EXPECT_EQ(stats.paths, paths);
    EXPECT_TRUE(stats.enumeratedFully);
    EXPECT_FALSE(diag.HasErrors()) << diag.ToString();
}

TEST(ImageSources, BadOptionsAreReportedNotComputed) {
    auto b = AllenBerkleyRoom(0.1, 0.0);
    ASSERT_TRUE(b);
    {
        Diagnostics diag;
        EXPECT_TRUE(ComputeImageSources(*b->room, 0, Options(11, true), diag).empty());
        EXPECT_NE(diag.ToString().find("image_order = 11 is out of range"), std::string::npos) << diag.ToString();
    }
    {
        Diagnostics diag;
        EXPECT_TRUE(ComputeImageSources(*b->room, 3, Options(1, true), diag).empty());
        EXPECT_NE(diag.ToString().find("source index 3 does not exist"), std::string::npos) << diag.ToString();
    }
    {
        Diagnostics diag;
        ImageSourceOptions o = Options(3, true);
        o.maxImages = 50;
        EXPECT_TRUE(ComputeImageSources(*b->room, 0, o, diag).empty());
        EXPECT_NE(diag.ToString().find("use the accelerated search or a lower image_order"), std::string::npos)
            << diag.ToString();
    }
}

// ---------------------------------------------------------------------------------------------
// CSV output: one file per pair, numbers that read back to the same doubles, names of faces.

std::vector<std::string> SplitCsvLine(const std::string& line) {
    std::vector<std::string> out;
    std::string cell;
    std::stringstream ss(line);
    while (std::getline(ss, cell, ',')) out.push_back(cell);
    if (!line.empty() && line.back() == ',') out.push_back("");
    return out;
}

TEST(PathsCsv, WritesOneFilePerPairWithFullPrecision) {
    auto b = AllenBerkleyRoom(0.1, 0.2);
    ASSERT_TRUE(b);
    b->room->scene.receivers[0].name = "row A/12";  // unsafe characters in a file name
    Diagnostics diag;
    const auto res = ComputeImageSources(*b->room, 0, Options(2, true), diag);
    const std::string dir = test::TempDir("paths_csv");
    ASSERT_TRUE(WritePathsCsv(dir, b->scene(), b->geometry(), 0, res, diag)) << diag.ToString();
    const std::string file = dir + "/paths/S__row_A_12.csv";
    std::ifstream in(file);
    ASSERT_TRUE(in.good()) << file;
    std::string line;
    std::getline(in, line);
    EXPECT_EQ(line, "order,delay_s,e63,e125,e250,e500,e1000,e2000,e4000,e8000,dir_x,dir_y,dir_z,faces,groups");
    size_t row = 0;
    while (std::getline(in, line)) {
        ASSERT_LT(row, res[0].paths.size());
        const SpecularPath& p = res[0].paths[row];
        const auto cells = SplitCsvLine(line);
        ASSERT_EQ(cells.size(), 15u) << line;
        EXPECT_EQ(std::stoi(cells[0]), p.order);
        EXPECT_EQ(std::strtod(cells[1].c_str(), nullptr), p.delayS);  // 17 digits: exact round trip
        for (int band = 0; band < kBandCount; ++band)
            EXPECT_EQ(std::strtod(cells[2 + band].c_str(), nullptr), p.energy[band]);
        for (int k = 0; k < 3; ++k) EXPECT_EQ(std::strtod(cells[10 + k].c_str(), nullptr), p.arrivalFrom[k]);
        std::string faces, groups;
        for (size_t i = 0; i < p.faces.size(); ++i) {
            faces += (i ? ";" : "") + std::to_string(p.faces[i]);
            groups += (i ? ";" : "") + GroupsOf(b->geometry(), p)[i];
        }
        EXPECT_EQ(cells[13], faces);
        EXPECT_EQ(cells[14], groups);
        ++row;
    }
    EXPECT_EQ(row, res[0].paths.size());
    EXPECT_EQ(row, 1u + 6u + 18u);
    // No temporary file is left behind.
    int files = 0;
    for (const auto& e : std::filesystem::directory_iterator(dir + "/paths")) {
        (void)e;
        ++files;
    }
    EXPECT_EQ(files, 1);
}

TEST(PathsCsv, NamesThatWouldShareAFileAreAnError) {
    auto b = AllenBerkleyRoom(0.1, 0.0);
    ASSERT_TRUE(b);
    AddReceiver(b->room->scene, "row A/12", Vec3(10, 7, 2));
    AddReceiver(b->room->scene, "row A 12", Vec3(11, 7, 2));
    Diagnostics diag;
    const auto res = ComputeImageSources(*b->room, 0, Options(1, true), diag);
    const std::string dir = test::TempDir("paths_csv_clash");
    EXPECT_FALSE(WritePathsCsv(dir, b->scene(), b->geometry(), 0, res, diag));
    EXPECT_NE(diag.ToString().find("would both be written to paths/S__row_A_12.csv"), std::string::npos)
        << diag.ToString();
}

// Directions are written in the model's axes: for a z-up model (x, y, z)_internal =
// (x, z, -y)_model (scene.h), so the internal +y (up) is the model's +z.
TEST(PathsCsv, DirectionsAreInModelAxes) {
    auto b = AllenBerkleyRoom(0.1, 0.0);
    ASSERT_TRUE(b);
    b->room->scene.modelUp = "z";
    ReceiverPaths rp;
    rp.source = 0;
    rp.receiver = 0;
    SpecularPath p;
    p.delayS = 0.01;
    p.energy = Bands::Constant(0.5);
    p.arrivalFrom = Vec3(0, 1, 0);
    rp.paths.push_back(p);
    const std::string text = FormatPathsCsv(b->scene(), b->geometry(), rp);
    const std::string row = text.substr(text.find('\n') + 1);
    const auto cells = SplitCsvLine(row.substr(0, row.find('\n')));
    ASSERT_EQ(cells.size(), 15u);
    EXPECT_EQ(std::strtod(cells[10].c_str(), nullptr), 0.0);
    EXPECT_EQ(std::strtod(cells[11].c_str(), nullptr), 0.0);
    EXPECT_EQ(std::strtod(cells[12].c_str(), nullptr), 1.0);
    EXPECT_EQ(cells[13], "");
}

}  // namespace
}  // namespace hallwright
