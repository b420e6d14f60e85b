#include "scene/obj_reader.h"

#include <gtest/gtest.h>

#include "scene_fixtures.h"
#include "test_support.h"

namespace hallwright {
namespace {

using test::HasError;

double TotalArea(const Mesh& m) {
    double a = 0;
    for (size_t t = 0; t < m.TriangleCount(); ++t) a += m.TriangleArea(t);
    return a;
}

TEST(ObjReader, ReadsTrianglesGroupsMaterialsAndFaceLines) {
    const std::string obj =
        "# a quad and a triangle\n"      // 1
        "v 0 0 0\nv 2 0 0\nv 2 0 3\nv 0 0 3\n"  // 2-5
        "usemtl stone\n"                 // 6
        "g floor\n"                      // 7
        "f 1 2 3 4\n"                    // 8
        "o lid\n"                        // 9
        "usemtl wood\n"                  // 10
        "f 1/1/1 2//1 3/2\n";            // 11 (texture and normal parts are range-checked below)
    Diagnostics diag;
    ObjModel m = ParseObj(obj + "vt 0 0\nvt 1 0\nvn 0 1 0\n", "t.obj", diag);
    ASSERT_FALSE(diag.HasErrors()) << diag.ToString();
    ASSERT_EQ(m.mesh.TriangleCount(), 3u);
    EXPECT_EQ(m.mesh.vertices.size(), 4u);
    EXPECT_EQ(m.mesh.groupNames, (std::vector<std::string>{"floor", "lid"}));
    EXPECT_EQ(m.materialNames, (std::vector<std::string>{"stone", "wood"}));
    EXPECT_EQ(m.materialFirstLine, (std::vector<int>{6, 10}));
    EXPECT_EQ(m.mesh.triangleLine, (std::vector<int>{8, 8, 11}));
    EXPECT_EQ(m.mesh.triangleGroup, (std::vector<int>{0, 0, 1}));
    EXPECT_EQ(m.mesh.triangleMaterial, (std::vector<int>{0, 0, 1}));
    EXPECT_EQ(m.facesWithoutMaterial, 0);
    // The quad 2 x 3 keeps its area and its winding (normals along -y like the OBJ order).
    EXPECT_NEAR(m.mesh.TriangleArea(0) + m.mesh.TriangleArea(1), 6.0, 1e-12);
    EXPECT_LT(m.mesh.TriangleCross(0).y(), 0);
    EXPECT_LT(m.mesh.TriangleCross(1).y(), 0);
}

// Ear clipping of a concave L-shaped hexagon: the triangles cover exactly the polygon's area
// (shoelace formula: 2x2 square minus a 1x1 corner = 3) with the polygon's own winding.
TEST(ObjReader, TriangulatesConcavePolygonPreservingAreaAndWinding) {
    const std::vector<Vec3> l = {{0, 0, 0}, {2, 0, 0}, {2, 1, 0}, {1, 1, 0}, {1, 2, 0}, {0, 2, 0}};
    for (int rot = 0; rot < 6; ++rot) {  // start the polygon at every corner, incl. the reflex one
        std::vector<Vec3> poly;
        for (int k = 0; k < 6; ++k) poly.push_back(l[(k + rot) % 6]);
        const auto tris = TriangulatePolygon(poly);
        ASSERT_EQ(tris.size(), 4u);
        double area = 0;
        for (const auto& t : tris) {
            const Vec3 c = (poly[t[1]] - poly[t[0]]).cross(poly[t[2]] - poly[t[0]]);
            EXPECT_GT(c.z(), 0) << "rotation " << rot;  // counter-clockwise like the input
            area += 0.5 * c.norm();
        }
        EXPECT_NEAR(area, 3.0, 1e-12) << "rotation " << rot;
    }
}

TEST(ObjReader, ResolvesNegativeRelativeIndicesAndForwardReferences) {
    Diagnostics diag;
    ObjModel m = ParseObj("v 0 0 0\nv 1 0 0\nv 0 1 0\nf -3 -2 -1\nf 4 5 6\nv 0 0 1\nv 1 0 1\nv 0 1 1\n", "t.obj", diag);
    ASSERT_FALSE(diag.HasErrors()) << diag.ToString();
    ASSERT_EQ(m.mesh.TriangleCount(), 2u);
    EXPECT_EQ(m.mesh.triangles[0], (std::array<uint32_t, 3>{0, 1, 2}));
    EXPECT_EQ(m.mesh.triangles[1], (std::array<uint32_t, 3>{3, 4, 5}));
    EXPECT_EQ(m.mesh.groupNames, (std::vector<std::string>{"(default)"}));
    EXPECT_EQ(m.facesWithoutMaterial, 2);
    EXPECT_EQ(m.firstLineWithoutMaterial, 4);
    EXPECT_EQ(m.mesh.triangleMaterial[0], -1);
}

TEST(ObjReader, RejectsNanInfiniteAndNonNumericCoordinatesWithLine) {
    Diagnostics diag;
    ParseObj("v 0 0 0\nv nan 0 0\nv 0 -inf 0\nv 0 0 abc\nv 1 2\nf 1 2 3\n", "hall.obj", diag);
    EXPECT_TRUE(HasError(diag, "hall.obj", 2, "vertex x coordinate is 'nan', not a finite number"));
    EXPECT_TRUE(HasError(diag, "hall.obj", 3, "vertex y coordinate is '-inf', not a finite number"));
    EXPECT_TRUE(HasError(diag, "hall.obj", 4, "vertex z coordinate is 'abc', which is not a number"));
    EXPECT_TRUE(HasError(diag, "hall.obj", 5, "vertex has 2 coordinate(s)"));
    EXPECT_EQ(diag.Items()[0].at.col, 3);
}

TEST(ObjReader, RejectsBadFaceIndicesWithLine) {
    Diagnostics diag;
    ParseObj("v 0 0 0\nv 1 0 0\nv 0 1 0\n"
             "f 1 2 0\n"       // 4: zero
             "f 1 2 9\n"       // 5: past the end
             "f -1 -2 -4\n"    // 6: before the first vertex
             "f 1 2 x3\n"      // 7: not an integer
             "f 1 2\n"         // 8: too few corners
             "f 1/7 2 3\n"     // 9: texture index past the end
             "f 1/1/1/1 2 3\n",  // 10: too many parts
             "hall.obj", diag);
    EXPECT_TRUE(HasError(diag, "hall.obj", 4, "face vertex index 0 is invalid; OBJ numbers vertices from 1"));
    EXPECT_TRUE(HasError(diag, "hall.obj", 5, "face refers to vertex 9, but the file defines only 3 vertices"));
    EXPECT_TRUE(HasError(diag, "hall.obj", 6, "face vertex index -4 reaches before the first vertex: only 3 defined"));
    EXPECT_TRUE(HasError(diag, "hall.obj", 7, "face vertex index 'x3' is not an integer"));
    EXPECT_TRUE(HasError(diag, "hall.obj", 8, "face has 2 corner(s)"));
    EXPECT_TRUE(HasError(diag, "hall.obj", 9, "face refers to texture coordinate 7, but the file defines only 0"));
    EXPECT_TRUE(HasError(diag, "hall.obj", 10, "too many '/' parts"));
}

// Found by tests/fuzz/obj_fuzz.cpp: a rejected face with texture references must not leave
// them behind (they pointed at a face that was never stored).
TEST(ObjReader, RejectedFaceWithTextureIndicesLeavesNothingBehind) {
    Diagnostics diag;
    ObjModel m = ParseObj("v 0 0 0\nv 1 0 0\nv 0 1 0\nf 1/5 2/6 0\n", "hall.obj", diag);
    EXPECT_TRUE(HasError(diag, "hall.obj", 4, "face vertex index 0 is invalid"));
    EXPECT_EQ(diag.ErrorCount(), 1) << diag.ToString();
    EXPECT_EQ(m.mesh.TriangleCount(), 0u);
}

TEST(ObjReader, RejectsEmptyBinaryFacelessAndUnreadableFiles) {
    Diagnostics diag;
    ParseObj("", "a.obj", diag);
    EXPECT_TRUE(HasError(diag, "a.obj", 0, "OBJ file is empty"));
    ParseObj(std::string("\x7f" "ELF\x02\x01\x01\0\0\0", 10), "b.obj", diag);
    EXPECT_TRUE(HasError(diag, "b.obj", 0, "OBJ file is binary (NUL byte at offset 7)"));
    ParseObj("# only\nv 0 0 0\nl 1 1\n", "c.obj", diag);
    EXPECT_TRUE(HasError(diag, "c.obj", 0, "contains no faces (1 vertices)"));

    const std::string dir = test::TempDir("obj_reader_files");
    Diagnostics fileDiag;
    const SourceLoc ref{"scene.toml", 3, 8, ""};
    EXPECT_FALSE(ReadObj(dir + "/nothing.obj", ref, fileDiag));
    EXPECT_TRUE(HasError(fileDiag, "scene.toml", 3, "cannot read OBJ model '" + dir + "/nothing.obj'"));
    EXPECT_FALSE(ReadObj(dir, ref, fileDiag));
    EXPECT_TRUE(HasError(fileDiag, "scene.toml", 3, "is a directory"));
    const std::string empty = test::WriteFile(dir, "empty.obj", "");
    EXPECT_FALSE(ReadObj(empty, ref, fileDiag));
    EXPECT_TRUE(HasError(fileDiag, "scene.toml", 3, "OBJ model '" + empty + "' is empty"));
}

TEST(ObjReader, WarnsOnceAboutUnknownStatementsAndJoinsContinuationLines) {
    Diagnostics diag;
    ObjModel m = ParseObj("v 0 0 0\nv 1 0 0\nv 0 1 0\nfoo 1\nfoo 2\nf 1 2 \\\n 3\nf 3 2 1 # comment\n", "t.obj", diag);
    ASSERT_FALSE(diag.HasErrors()) << diag.ToString();
    EXPECT_EQ(diag.WarningCount(), 1);
    EXPECT_TRUE(test::HasMessage(diag, Severity::kWarning, "t.obj", 4, "unknown OBJ statement 'foo' ignored"));
    ASSERT_EQ(m.mesh.TriangleCount(), 2u);
    EXPECT_EQ(m.mesh.triangleLine, (std::vector<int>{6, 8}));
}

TEST(ObjReader, CrlfLineEndingsAndByteOrderMarkAreAccepted) {
    Diagnostics diag;
    ObjModel m = ParseObj("\xEF\xBB\xBFv 0 0 0\r\nv 1 0 0\r\nv 0 1 0\r\ng wall\r\nf 1 2 3\r\n", "t.obj", diag);
    ASSERT_FALSE(diag.HasErrors()) << diag.ToString();
    EXPECT_EQ(m.mesh.groupNames, (std::vector<std::string>{"wall"}));
    EXPECT_NEAR(TotalArea(m.mesh), 0.5, 1e-12);
}

}  // namespace
}  // namespace hallwright
