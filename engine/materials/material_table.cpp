// Materials table reader (CSV) and the built-in library.
//
// Format: one header line, then one material per line; blank lines and lines starting with
// '#' are ignored; cells may be "double-quoted" (a quote inside is written ""). Columns in any
// order. Required: material, a125, a250, a500, a1k, a2k, a4k, s125, s250, s500, s1k, s2k, s4k.
// Optional: a63, a8k, s63, s8k, facing_kg_m2, open_area_pct, cavity_mm, note; an optional cell
// may be left empty (= not given).
//
// Extension rule for the bands outside 125 Hz - 4 kHz (common practice, no source): when a63 /
// s63 is absent or empty, the 125 Hz value is used at 63 Hz; when a8k / s8k is absent or empty,
// the 4 kHz value is used at 8 kHz. Such materials are marked extended63 / extended8k so the
// CLI can note that those bands rest on an assumption, not on data.
#include <algorithm>
#include <array>
#include <cstdio>
#include <map>

#include "hallwright/material.h"
#include "materials/builtin_materials.h"
#include "scene/text_util.h"

namespace hallwright {
namespace {

// One cell of a CSV line with the 1-based column where it starts.
struct Cell {
    std::string text;
    int col = 1;
};

// Splits one line into cells; a quote error is reported and returns false.
bool SplitCsvLine(std::string_view line, const SourceLoc& lineAt, std::vector<Cell>& cells,
                  Diagnostics& diag) {
    cells.clear();
    size_t i = 0;
    while (true) {
        Cell cell;
        cell.col = static_cast<int>(i) + 1;
        // Skip spaces before a quoted cell, so `a, "b"` works.
        size_t j = i;
        while (j < line.size() && (line[j] == ' ' || line[j] == '\t')) ++j;
        if (j < line.size() && line[j] == '"') {
            size_t k = j + 1;
            bool closed = false;
            while (k < line.size()) {
                if (line[k] == '"') {
                    if (k + 1 < line.size() && line[k + 1] == '"') {
                        cell.text += '"';
                        k += 2;
                        continue;
                    }
                    closed = true;
                    ++k;
                    break;
                }
                cell.text += line[k++];
            }
            if (!closed) {
                SourceLoc at = lineAt;
                at.col = static_cast<int>(j) + 1;
                diag.Error(at, "unterminated quote; close the cell with \" (cells cannot span lines)");
                return false;
            }
            while (k < line.size() && (line[k] == ' ' || line[k] == '\t' || line[k] == '\r')) ++k;
            if (k < line.size() && line[k] != ',') {
                SourceLoc at = lineAt;
                at.col = static_cast<int>(k) + 1;
                diag.Error(at, "unexpected text after a quoted cell; put a comma after the closing quote");
                return false;
            }
            cells.push_back(std::move(cell));
            if (k >= line.size()) return true;
            i = k + 1;
            continue;
        }
        size_t comma = line.find(',', i);
        std::string_view raw = line.substr(i, comma == std::string_view::npos ? std::string_view::npos : comma - i);
        // Report the column of the first visible character of the cell.
        size_t lead = 0;
        while (lead < raw.size() && (raw[lead] == ' ' || raw[lead] == '\t')) ++lead;
        cell.col = static_cast<int>(i + lead) + 1;
        cell.text = std::string(text::Trim(raw));
        cells.push_back(std::move(cell));
        if (comma == std::string_view::npos) return true;
        i = comma + 1;
    }
}

enum class Column {
    kMaterial, kAbsorption, kScattering, kFacing, kOpenArea, kCavity, kNote
};

struct ColumnSpec {
    const char* name;
    Column kind;
    int band;        // for absorption / scattering
    bool required;
};

const std::vector<ColumnSpec>& ColumnSpecs() {
    static const std::vector<ColumnSpec> specs = [] {
        std::vector<ColumnSpec> s;
        s.push_back({"material", Column::kMaterial, -1, true});
        static const char* kAbs[kBandCount] = {"a63", "a125", "a250", "a500", "a1k", "a2k", "a4k", "a8k"};
        static const char* kSca[kBandCount] = {"s63", "s125", "s250", "s500", "s1k", "s2k", "s4k", "s8k"};
        for (int b = 0; b < kBandCount; ++b)
            s.push_back({kAbs[b], Column::kAbsorption, b, b != 0 && b != kBandCount - 1});
        for (int b = 0; b < kBandCount; ++b)
            s.push_back({kSca[b], Column::kScattering, b, b != 0 && b != kBandCount - 1});
        s.push_back({"facing_kg_m2", Column::kFacing, -1, false});
        s.push_back({"open_area_pct", Column::kOpenArea, -1, false});
        s.push_back({"cavity_mm", Column::kCavity, -1, false});
        s.push_back({"note", Column::kNote, -1, false});
        return s;
    }();
    return specs;
}

std::string BandWord(int band) {
    return band < 4 ? std::to_string(kNominalBandHz[band]) + " Hz"
                    : std::to_string(kNominalBandHz[band] / 1000) + " kHz";
}

// Parses a number cell; reports why it is not a usable number.
std::optional<double> NumberCell(const Cell& cell, const std::string& what, const SourceLoc& at,
                                 Diagnostics& diag) {
    if (auto v = text::ParseFiniteDouble(cell.text)) return v;
    if (text::IsNanOrInfSpelling(cell.text))
        diag.Error(at, what + " is '" + cell.text + "', which is not a finite number; give a number");
    else
        diag.Error(at, what + " is '" + cell.text + "', which is not a number; give a plain decimal number such as 0.25");
    return std::nullopt;
}

}  // namespace

const Material* MaterialTable::Find(const std::string& name) const {
    for (const auto& m : materials)
        if (m.name == name) return &m;
    return nullptr;
}

MaterialTable ParseMaterialTable(const std::string& text, const std::string& path, Diagnostics& diag) {
    MaterialTable table;
    table.path = path;
    if (size_t nul = text::FindNulByte(text); nul != std::string::npos) {
        diag.Error({path, 0, 0, ""}, "materials table is a binary file (NUL byte at offset " +
                                         std::to_string(nul) + "); save it as CSV text");
        return table;
    }
    const auto& specs = ColumnSpecs();
    std::vector<int> columnSpec;  // header position -> index into specs
    bool haveHeader = false;
    std::map<std::string, int> firstLineOf;
    std::vector<Cell> cells;
    std::string_view rest = text;
    // Skip a UTF-8 byte order mark written by some spreadsheet programs.
    if (rest.substr(0, 3) == "\xEF\xBB\xBF") rest.remove_prefix(3);
    int lineNo = 0;
    bool anyRow = false;
    while (!rest.empty()) {
        size_t nl = rest.find('\n');
        std::string_view line = rest.substr(0, nl);
        rest = nl == std::string_view::npos ? std::string_view() : rest.substr(nl + 1);
        ++lineNo;
        if (!line.empty() && line.back() == '\r') line.remove_suffix(1);
        std::string_view trimmed = text::Trim(line);
        if (trimmed.empty() || trimmed.front() == '#') continue;
        const SourceLoc lineAt{path, lineNo, 0, ""};
        if (!SplitCsvLine(line, lineAt, cells, diag)) {
            if (!haveHeader) return table;
            continue;
        }

        // The header: map each column to its meaning; unknown and repeated columns are errors.
        if (!haveHeader) {
            haveHeader = true;
            std::vector<bool> seen(specs.size(), false);
            std::vector<std::string> known;
            for (const auto& s : specs) known.push_back(s.name);
            bool headerOk = true;
            for (const auto& c : cells) {
                std::string name = c.text;
                std::transform(name.begin(), name.end(), name.begin(),
                               [](unsigned char ch) { return static_cast<char>(std::tolower(ch)); });
                SourceLoc at{path, lineNo, c.col, ""};
                auto it = std::find(known.begin(), known.end(), name);
                if (it == known.end()) {
                    diag.Error(at, "unknown column '" + c.text + "'" + text::DidYouMean(name, known) +
                                       "; columns are material, a63..a8k, s63..s8k, facing_kg_m2, "
                                       "open_area_pct, cavity_mm, note");
                    headerOk = false;
                    columnSpec.push_back(-1);
                    continue;
                }
                const int idx = static_cast<int>(it - known.begin());
                if (seen[idx]) {
                    diag.Error(at, "column '" + name + "' appears twice in the header; keep one");
                    headerOk = false;
                }
                seen[idx] = true;
                columnSpec.push_back(idx);
            }
            std::vector<std::string> missing;
            for (size_t s = 0; s < specs.size(); ++s)
                if (specs[s].required && !seen[s]) missing.push_back(specs[s].name);
            if (!missing.empty()) {
                diag.Error({path, lineNo, 1, ""},
                           "the header lacks required column(s) " + text::JoinList(missing, 20) +
                               "; every material needs 'material' and a125..a4k, s125..s4k "
                               "(absorption and scattering at 125 Hz - 4 kHz)");
                headerOk = false;
            }
            if (!headerOk) return table;
            continue;
        }

        // A material row.
        anyRow = true;
        if (cells.size() > columnSpec.size()) {
            diag.Error({path, lineNo, cells[columnSpec.size()].col, ""},
                       "this row has " + std::to_string(cells.size()) + " cells but the header has " +
                           std::to_string(columnSpec.size()) + " columns; remove the extra cells or "
                           "quote a cell that contains a comma");
            continue;
        }
        Material m;
        m.definedAt = lineAt;
        std::array<bool, kBandCount> haveA{}, haveS{};
        bool rowOk = true;
        std::string nameForMessages;
        for (size_t k = 0; k < columnSpec.size(); ++k) {
            if (specs[columnSpec[k]].kind == Column::kMaterial && k < cells.size()) nameForMessages = cells[k].text;
        }
        for (size_t k = 0; k < columnSpec.size(); ++k) {
            const ColumnSpec& spec = specs[columnSpec[k]];
            const Cell cell = k < cells.size() ? cells[k] : Cell{"", cells.empty() ? 1 : static_cast<int>(line.size()) + 1};
            SourceLoc at{path, lineNo, cell.col, ""};
            const std::string owner = nameForMessages.empty() ? "" : " of '" + nameForMessages + "'";
            if (spec.kind == Column::kMaterial) {
                m.name = cell.text;
                if (m.name.empty()) {
                    diag.Error(at, "material name is empty; give each row a name");
                    rowOk = false;
                }
                continue;
            }
            if (spec.kind == Column::kNote) {
                m.note = cell.text;
                continue;
            }
            if (cell.text.empty()) {
                if (spec.required) {
                    diag.Error(at, std::string(spec.kind == Column::kAbsorption ? "absorption" : "scattering") +
                                       " at " + BandWord(spec.band) + owner + " (" + spec.name +
                                       ") is missing; every material needs values for 125 Hz - 4 kHz");
                    rowOk = false;
                }
                continue;
            }
            if (spec.kind == Column::kAbsorption || spec.kind == Column::kScattering) {
                const std::string what = std::string(spec.kind == Column::kAbsorption ? "absorption" : "scattering") +
                                         " at " + BandWord(spec.band) + owner + " (" + spec.name + ")";
                auto v = NumberCell(cell, what, at, diag);
                if (!v) {
                    rowOk = false;
                    continue;
                }
                if (*v < 0 || *v > 1) {
                    // ISO 354 values slightly above 1 are an edge effect of the test; larger
                    // ones are usually percentages.
                    std::string hint = "; coefficients must lie within [0, 1]";
                    if (*v > 1 && *v <= 1.5) {
                        hint = "; measured ISO 354 values can exceed 1 (edge effect): cap them at 1";
                    } else if (*v > 1.5 && *v <= 100) {
                        char buf[64];
                        std::snprintf(buf, sizeof buf, "%g", *v / 100);
                        hint = "; coefficients are fractions: write " + std::string(buf) + " for " + cell.text + " %";
                    }
                    diag.Error(at, what + " is " + cell.text + ", outside [0, 1]" + hint);
                    rowOk = false;
                    continue;
                }
                if (spec.kind == Column::kAbsorption) {
                    m.absorption[spec.band] = *v;
                    haveA[spec.band] = true;
                } else {
                    m.scattering[spec.band] = *v;
                    haveS[spec.band] = true;
                }
                continue;
            }
            // Construction data of the facing (used by the design review).
            const std::string what = std::string(spec.name) + owner;
            auto v = NumberCell(cell, what, at, diag);
            if (!v) {
                rowOk = false;
                continue;
            }
            if (spec.kind == Column::kFacing) {
                if (*v <= 0) {
                    diag.Error(at, what + " is " + cell.text + "; a facing's surface density must be positive (kg/m^2), or leave the cell empty");
                    rowOk = false;
                } else {
                    m.facingKgM2 = *v;
                }
            } else if (spec.kind == Column::kOpenArea) {
                if (*v < 0 || *v > 100) {
                    diag.Error(at, what + " is " + cell.text + "; open area is a percentage within [0, 100]");
                    rowOk = false;
                } else {
                    m.openAreaPct = *v;
                }
            } else if (spec.kind == Column::kCavity) {
                if (*v < 0) {
                    diag.Error(at, what + " is " + cell.text + "; a cavity depth cannot be negative (mm)");
                    rowOk = false;
                } else {
                    m.cavityMm = *v;
                }
            }
        }
        if (!rowOk) continue;
        // Extension rule (see the file comment): 63 Hz from 125 Hz, 8 kHz from 4 kHz.
        const int last = kBandCount - 1;
        if (!haveA[0]) m.absorption[0] = m.absorption[1];
        if (!haveS[0]) m.scattering[0] = m.scattering[1];
        if (!haveA[last]) m.absorption[last] = m.absorption[last - 1];
        if (!haveS[last]) m.scattering[last] = m.scattering[last - 1];
        m.extended63 = !haveA[0] || !haveS[0];
        m.extended8k = !haveA[last] || !haveS[last];
        if (auto it = firstLineOf.find(m.name); it != firstLineOf.end()) {
            diag.Error({path, lineNo, 1, ""}, "material '" + m.name + "' is defined twice (first at line " +
                                                  std::to_string(it->second) + "); rename or remove one");
            continue;
        }
        firstLineOf[m.name] = lineNo;
        table.materials.push_back(std::move(m));
    }
    if (!haveHeader)
        diag.Error({path, 0, 0, ""}, "materials table has no header line; start with "
                                     "material,a125,a250,a500,a1k,a2k,a4k,s125,s250,s500,s1k,s2k,s4k");
    else if (!anyRow)
        diag.Error({path, 0, 0, ""}, "materials table has a header but no materials; add one row per material");
    return table;
}

MaterialTable ReadMaterialTable(const std::string& path, Diagnostics& diag) {
    auto text = text::ReadUserFile(path, "materials table", SourceLoc{}, diag);
    if (!text) {
        MaterialTable empty;
        empty.path = path;
        return empty;
    }
    return ParseMaterialTable(*text, path, diag);
}

const MaterialTable& BuiltinMaterials() {
    static const MaterialTable table = [] {
        Diagnostics diag;
        MaterialTable t = ParseMaterialTable(kBuiltinMaterialsCsv, kBuiltinMaterialsPath, diag);
        HW_CHECK(!diag.HasErrors(), diag.ToString());
        return t;
    }();
    return table;
}

}  // namespace hallwright
