#pragma once
// Wavefront OBJ reader (private to engine/scene). Our own line-by-line parser, so that every
// problem names its file and line: vertices are checked for non-numbers and nan/inf, face
// indices (absolute and negative relative ones) for range, and each triangle keeps the line
// of the face it came from. Polygons are triangulated by ear clipping in their own plane.
#include <array>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "hallwright/diagnostics.h"
#include "hallwright/mesh.h"

namespace hallwright {

struct ObjModel {
    /* Vertices exactly as written (model units and axes); triangleMaterial holds an index
       into materialNames, or -1 for a face that no `usemtl` precedes. */
    Mesh mesh;
    std::vector<std::string> materialNames;  // `usemtl` names in order of first use
    std::vector<int> materialFirstLine;      // line of the first `usemtl` of each name
    int facesWithoutMaterial = 0;            // OBJ faces (not triangles) before any usemtl
    int firstLineWithoutMaterial = 0;
    int faceCount = 0;                       // OBJ `f` statements accepted
};

/* Parses OBJ text; `path` is used in messages. Errors go to diag (the result is then partial). */
ObjModel ParseObj(std::string_view text, const std::string& path, Diagnostics& diag);

/* Reads and parses an OBJ file; unreadable/empty/binary files are reported at `refAt`. */
std::optional<ObjModel> ReadObj(const std::string& path, const SourceLoc& refAt, Diagnostics& diag);

/* Triangulates a simple polygon given by its corner points; returns corner-index triples in
   the polygon's own winding. Exposed for tests. */
std::vector<std::array<int, 3>> TriangulatePolygon(const std::vector<Vec3>& corners);

}  // namespace hallwright
