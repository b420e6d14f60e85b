// OBJ reader: validation pre-pass and parsing in one pass over the lines (see obj_reader.h).
//
// Conventions (documented in the README's scene section):
// - `g` and `o` both name the group of the faces that follow (the later statement wins); a `g`
//   with several names uses the first; faces before any `g`/`o` belong to "(default)".
// - `usemtl` names the material of the faces that follow; faces before any `usemtl` get the
//   material named "default" (the scene loader resolves it like any other name).
// - Positive indices may refer to any vertex of the file; negative indices are relative to
//   the vertices defined above the face (-1 = the last one), as the OBJ format defines.
// - Statements that carry no surface (vt, vn, vp, s, mtllib, l, p, curves) are ignored; an
//   unknown statement is a warning (once per keyword).
#include "scene/obj_reader.h"

#include <algorithm>
#include <cmath>
#include <map>
#include <set>

#include "scene/text_util.h"

namespace hallwright {
namespace {

constexpr int kMaxErrorsReported = 25;    // further errors are counted, not listed
constexpr int kEarClippingMaxCorners = 128;  // bigger polygons are fan-triangulated (O(n^3) guard)

struct RawFace {
    int line = 0;
    int group = 0;
    int material = -1;
    size_t first = 0, count = 0;  // range in the flat corner list
};

struct IndexRef {
    long long value;  // as written (1-based absolute, or resolved from a negative one)
    int col;          // 1-based column of the corner token
    char kind;        // 'v', 't' (texture) or 'n' (normal)
};

std::vector<std::pair<std::string_view, int>> Tokenize(std::string_view line) {
    std::vector<std::pair<std::string_view, int>> tokens;
    size_t i = 0;
    while (i < line.size()) {
        while (i < line.size() && (line[i] == ' ' || line[i] == '\t' || line[i] == '\r' ||
                                   line[i] == '\f' || line[i] == '\v'))
            ++i;
        if (i >= line.size()) break;
        size_t j = i;
        while (j < line.size() && line[j] != ' ' && line[j] != '\t' && line[j] != '\r' &&
               line[j] != '\f' && line[j] != '\v')
            ++j;
        tokens.emplace_back(line.substr(i, j - i), static_cast<int>(i) + 1);
        i = j;
    }
    return tokens;
}

class ErrorSink {
  public:
    ErrorSink(const std::string& path, Diagnostics& diag) : path_(path), diag_(diag) {}
    void Error(int line, int col, std::string msg) {
        if (++count_ <= kMaxErrorsReported) diag_.Error({path_, line, col, ""}, std::move(msg));
    }
    void Finish() {
        if (count_ > kMaxErrorsReported)
            diag_.Note({path_, 0, 0, ""}, std::to_string(count_ - kMaxErrorsReported) +
                                              " further OBJ errors not listed (" +
                                              std::to_string(count_) + " in all)");
    }
    int Count() const { return count_; }

  private:
    const std::string& path_;
    Diagnostics& diag_;
    int count_ = 0;
};

const std::set<std::string_view>& IgnoredStatements() {
    static const std::set<std::string_view> kIgnored = {
        "vt", "vn", "vp", "s", "mtllib", "l", "p", "usemap", "maplib", "lod", "shadow_obj",
        "trace_obj", "bevel", "c_interp", "d_interp", "cstype", "deg", "bmat", "step", "curv",
        "curv2", "surf", "parm", "trim", "hole", "scrv", "sp", "end", "con", "mg", "ctech",
        "stech", "call", "csh"};
    return kIgnored;
}

}  // namespace

std::vector<std::array<int, 3>> TriangulatePolygon(const std::vector<Vec3>& corners) {
    const int n = static_cast<int>(corners.size());
    std::vector<std::array<int, 3>> out;
    if (n < 3) return out;
    if (n == 3) return {{0, 1, 2}};
    // Fan triangulation: used for huge polygons and when ear clipping finds no ear.
    auto fan = [&](const std::vector<int>& ring) {
        for (size_t k = 1; k + 1 < ring.size(); ++k) out.push_back({ring[0], ring[k], ring[k + 1]});
    };
    std::vector<int> ring(n);
    for (int i = 0; i < n; ++i) ring[i] = i;
    if (n > kEarClippingMaxCorners) {
        fan(ring);
        return out;
    }
    // Project onto the plane of the Newell normal (drop its largest component).
    Vec3 normal = Vec3::Zero();
    for (int i = 0; i < n; ++i) normal += corners[i].cross(corners[(i + 1) % n]);
    int drop = 0;
    normal.cwiseAbs().maxCoeff(&drop);
    if (!(normal.norm() > 0) || !std::isfinite(normal.norm())) {
        fan(ring);
        return out;
    }
    const int ax = (drop + 1) % 3, ay = (drop + 2) % 3;
    std::vector<Eigen::Vector2d> p(n);
    double extent = 0;
    for (int i = 0; i < n; ++i) {
        p[i] = {corners[i][ax], corners[i][ay]};
        extent = std::max({extent, std::abs(p[i].x() - p[0].x()), std::abs(p[i].y() - p[0].y())});
    }
    // Orientation of the projected polygon, so "convex" means turning the same way.
    const double orientation = normal[drop] > 0 ? 1.0 : -1.0;
    const double eps = 1e-14 * extent * extent;
    auto cross2 = [](const Eigen::Vector2d& a, const Eigen::Vector2d& b, const Eigen::Vector2d& c) {
        return (b - a).x() * (c - a).y() - (b - a).y() * (c - a).x();
    };
    // Ear clipping: cut off a convex corner whose triangle contains no other corner.
    while (ring.size() > 3) {
        const int m = static_cast<int>(ring.size());
        bool clipped = false;
        for (int k = 0; k < m && !clipped; ++k) {
            const int ia = ring[(k + m - 1) % m], ib = ring[k], ic = ring[(k + 1) % m];
            if (orientation * cross2(p[ia], p[ib], p[ic]) <= eps) continue;
            bool empty = true;
            for (int q = 0; q < m && empty; ++q) {
                const int iq = ring[q];
                if (iq == ia || iq == ib || iq == ic) continue;
                if (p[iq] == p[ia] || p[iq] == p[ib] || p[iq] == p[ic]) continue;
                const double d1 = orientation * cross2(p[ia], p[ib], p[iq]);
                const double d2 = orientation * cross2(p[ib], p[ic], p[iq]);
                const double d3 = orientation * cross2(p[ic], p[ia], p[iq]);
                if (d1 >= -eps && d2 >= -eps && d3 >= -eps) empty = false;
            }
            if (!empty) continue;
            out.push_back({ia, ib, ic});
            ring.erase(ring.begin() + k);
            clipped = true;
        }
        if (!clipped) {
            fan(ring);
            return out;
        }
    }
    out.push_back({ring[0], ring[1], ring[2]});
    return out;
}

ObjModel ParseObj(std::string_view text, const std::string& path, Diagnostics& diag) {
    ObjModel model;
    ErrorSink errors(path, diag);
    if (text.empty()) {
        diag.Error({path, 0, 0, ""}, "OBJ file is empty; export the model again");
        return model;
    }
    if (size_t nul = text::FindNulByte(text); nul != std::string_view::npos) {
        diag.Error({path, 0, 0, ""}, "OBJ file is binary (NUL byte at offset " + std::to_string(nul) +
                                         "); export the model as a text Wavefront OBJ");
        return model;
    }
    if (text.substr(0, 3) == "\xEF\xBB\xBF") text.remove_prefix(3);

    std::vector<RawFace> faces;
    std::vector<IndexRef> corners;       // vertex corners of all faces, flat
    std::vector<std::pair<size_t, IndexRef>> otherRefs;  // texture/normal refs (face, ref)
    long long vertexCount = 0, texCount = 0, normalCount = 0;
    std::map<std::string, int> groupIndex, materialIndex;
    std::set<std::string> warnedKeywords;
    int currentGroup = -1, currentMaterial = -1;
    auto groupOf = [&](const std::string& name) {
        auto [it, inserted] = groupIndex.emplace(name, static_cast<int>(model.mesh.groupNames.size()));
        if (inserted) model.mesh.groupNames.push_back(name);
        return it->second;
    };

    int lineNo = 0;
    std::string joined;  // a statement continued with a trailing backslash
    while (!text.empty()) {
        size_t nl = text.find('\n');
        std::string_view physical = text.substr(0, nl);
        text = nl == std::string_view::npos ? std::string_view() : text.substr(nl + 1);
        ++lineNo;
        const int statementLine = lineNo;
        std::string_view line = physical;
        // Join continuation lines ("\" at the end); the statement keeps its first line.
        joined.clear();
        while (!text::Trim(line).empty() && text::Trim(line).back() == '\\') {
            std::string_view t = text::Trim(line);
            joined.append(line.substr(0, static_cast<size_t>(t.data() - line.data()) + t.size() - 1));
            joined.push_back(' ');
            if (text.empty()) {
                line = std::string_view();
                break;
            }
            nl = text.find('\n');
            line = text.substr(0, nl);
            text = nl == std::string_view::npos ? std::string_view() : text.substr(nl + 1);
            ++lineNo;
        }
        if (!joined.empty()) {
            joined.append(line);
            line = joined;
        }
        if (size_t hash = line.find('#'); hash != std::string_view::npos) line = line.substr(0, hash);
        auto tokens = Tokenize(line);
        if (tokens.empty()) continue;
        const std::string_view keyword = tokens[0].first;

        // Vertex: three finite coordinates (optional w or colour values must be numbers too).
        if (keyword == "v") {
            ++vertexCount;
            if (tokens.size() < 4) {
                errors.Error(statementLine, tokens[0].second,
                             "vertex has " + std::to_string(tokens.size() - 1) +
                                 " coordinate(s); a vertex needs x y z");
            }
            for (size_t k = 1; k < tokens.size(); ++k) {
                auto [tok, col] = tokens[k];
                if (text::ParseFiniteDouble(tok)) continue;
                const std::string which = k <= 3 ? std::string(1, "xyz"[k - 1]) + " coordinate"
                                                 : "value " + std::to_string(k);
                if (text::IsNanOrInfSpelling(tok))
                    errors.Error(statementLine, col,
                                 "vertex " + which + " is '" + std::string(tok) +
                                     "', not a finite number; fix the vertex in the modeller and export again");
                else
                    errors.Error(statementLine, col,
                                 "vertex " + which + " is '" + std::string(tok) +
                                     "', which is not a number; a vertex line reads `v x y z`");
            }
            // Keep the index sequence intact even for a bad vertex (errors stop the load anyway).
            Vec3 v = Vec3::Zero();
            for (size_t k = 1; k < tokens.size() && k <= 3; ++k)
                if (auto d = text::ParseFiniteDouble(tokens[k].first)) v[k - 1] = *d;
            model.mesh.vertices.push_back(v);
            continue;
        }
        if (keyword == "vt") {
            ++texCount;
            continue;
        }
        if (keyword == "vn") {
            ++normalCount;
            continue;
        }

        // Face: three or more corners `v`, `v/vt`, `v//vn` or `v/vt/vn`.
        if (keyword == "f") {
            if (tokens.size() < 4) {
                errors.Error(statementLine, tokens[0].second,
                             "face has " + std::to_string(tokens.size() - 1) +
                                 " corner(s); a face needs at least 3 vertex indices");
                continue;
            }
            RawFace face;
            face.line = statementLine;
            if (currentGroup < 0) currentGroup = groupOf("(default)");
            face.group = currentGroup;
            face.material = currentMaterial;
            face.first = corners.size();
            std::vector<IndexRef> faceOther;  // texture/normal refs, kept if the face is accepted
            bool ok = true;
            for (size_t k = 1; k < tokens.size(); ++k) {
                auto [tok, col] = tokens[k];
                std::string_view parts[3];
                int nParts = 0;
                size_t start = 0;
                while (nParts < 3) {
                    size_t slash = tok.find('/', start);
                    parts[nParts++] = tok.substr(start, slash == std::string_view::npos ? slash : slash - start);
                    if (slash == std::string_view::npos) break;
                    start = slash + 1;
                    if (nParts == 3) {
                        ok = false;
                        errors.Error(statementLine, col, "face corner '" + std::string(tok) +
                                                             "' has too many '/' parts; write v, v/vt, v//vn or v/vt/vn");
                    }
                }
                if (!ok) break;
                for (int part = 0; part < nParts; ++part) {
                    if (part > 0 && parts[part].empty()) continue;  // v//vn or v/vt/
                    const char kind = "vtn"[part];
                    const char* what = part == 0 ? "vertex" : part == 1 ? "texture coordinate" : "normal";
                    const long long defined = part == 0 ? vertexCount : part == 1 ? texCount : normalCount;
                    auto idx = text::ParseInteger(parts[part]);
                    if (!idx) {
                        errors.Error(statementLine, col,
                                     std::string("face ") + what + " index '" + std::string(parts[part]) +
                                         "' is not an integer; a face line reads `f 1 2 3` (1-based vertex numbers)");
                        ok = false;
                        continue;
                    }
                    long long value = *idx;
                    if (value == 0) {
                        errors.Error(statementLine, col,
                                     std::string("face ") + what +
                                         " index 0 is invalid; OBJ numbers vertices from 1 (or -1 for the last one)");
                        ok = false;
                        continue;
                    }
                    if (value < 0) {
                        if (-value > defined) {
                            errors.Error(statementLine, col,
                                         std::string("face ") + what + " index " + std::to_string(value) +
                                             " reaches before the first " + what + ": only " +
                                             std::to_string(defined) + " defined above this line");
                            ok = false;
                            continue;
                        }
                        value = defined + value + 1;
                    }
                    if (part == 0)
                        corners.push_back({value, col, kind});
                    else
                        faceOther.push_back({value, col, kind});
                }
                if (!ok) break;
            }
            if (!ok) {
                corners.resize(face.first);
                continue;
            }
            face.count = corners.size() - face.first;
            if (currentMaterial < 0) {
                if (model.facesWithoutMaterial++ == 0) model.firstLineWithoutMaterial = statementLine;
            }
            for (const IndexRef& ref : faceOther) otherRefs.push_back({faces.size(), ref});
            faces.push_back(face);
            continue;
        }

        // Group / object: the faces that follow belong to it.
        if (keyword == "g" || keyword == "o") {
            currentGroup = groupOf(tokens.size() > 1 ? std::string(tokens[1].first) : "(default)");
            continue;
        }
        if (keyword == "usemtl") {
            if (tokens.size() < 2) {
                errors.Error(statementLine, tokens[0].second, "usemtl needs a material name");
                continue;
            }
            std::string name(tokens[1].first);
            for (size_t k = 2; k < tokens.size(); ++k) name += " " + std::string(tokens[k].first);
            auto [it, inserted] = materialIndex.emplace(name, static_cast<int>(model.materialNames.size()));
            if (inserted) {
                model.materialNames.push_back(name);
                model.materialFirstLine.push_back(statementLine);
            }
            currentMaterial = it->second;
            continue;
        }
        if (IgnoredStatements().count(keyword)) continue;
        if (warnedKeywords.insert(std::string(keyword)).second)
            diag.Warning({path, statementLine, tokens[0].second, ""},
                         "unknown OBJ statement '" + std::string(keyword) + "' ignored (reported once)");
    }

    // Range check of positive indices (they may refer forward to any vertex of the file).
    for (const auto& face : faces)
        for (size_t k = face.first; k < face.first + face.count; ++k)
            if (corners[k].value > vertexCount)
                errors.Error(face.line, corners[k].col,
                             "face refers to vertex " + std::to_string(corners[k].value) + ", but the file defines only " +
                                 std::to_string(vertexCount) + " vertices");
    for (const auto& [faceIdx, ref] : otherRefs) {
        const long long defined = ref.kind == 't' ? texCount : normalCount;
        if (ref.value > defined)
            errors.Error(faces[faceIdx].line, ref.col,
                         std::string("face refers to ") + (ref.kind == 't' ? "texture coordinate " : "normal ") +
                             std::to_string(ref.value) + ", but the file defines only " + std::to_string(defined));
    }
    if (faces.empty() && errors.Count() == 0)
        diag.Error({path, 0, 0, ""}, "OBJ file contains no faces (" + std::to_string(vertexCount) +
                                         " vertices); export the surfaces as polygons, not lines or points");
    errors.Finish();
    if (errors.Count() > 0) return model;

    // Triangulate: each triangle keeps the face's line, group and material.
    Mesh& mesh = model.mesh;
    std::vector<Vec3> poly;
    for (const auto& face : faces) {
        poly.clear();
        for (size_t k = face.first; k < face.first + face.count; ++k)
            poly.push_back(mesh.vertices[static_cast<size_t>(corners[k].value - 1)]);
        for (const auto& t : TriangulatePolygon(poly)) {
            mesh.triangles.push_back({static_cast<uint32_t>(corners[face.first + t[0]].value - 1),
                                      static_cast<uint32_t>(corners[face.first + t[1]].value - 1),
                                      static_cast<uint32_t>(corners[face.first + t[2]].value - 1)});
            mesh.triangleMaterial.push_back(face.material);
            mesh.triangleGroup.push_back(face.group);
            mesh.triangleLine.push_back(face.line);
        }
    }
    model.faceCount = static_cast<int>(faces.size());
    return model;
}

std::optional<ObjModel> ReadObj(const std::string& path, const SourceLoc& refAt, Diagnostics& diag) {
    auto text = text::ReadUserFile(path, "OBJ model", refAt, diag);
    if (!text) return std::nullopt;
    const int before = diag.ErrorCount();
    ObjModel model = ParseObj(*text, path, diag);
    if (diag.ErrorCount() > before) return std::nullopt;
    return model;
}

}  // namespace hallwright
