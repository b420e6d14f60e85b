// Long-form parameter CSV (parameters_csv.h).
#include "hallwright/parameters_csv.h"

#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <system_error>

#include <unistd.h>

namespace hallwright {

namespace {

std::string CsvField(const std::string& s) {
    if (s.find_first_of(",\"\n\r") == std::string::npos) return s;
    std::string out = "\"";
    for (char c : s) {
        if (c == '"') out += '"';
        out += (c == '\n' || c == '\r') ? ' ' : c;
    }
    return out + "\"";
}

std::string Number(const std::optional<double>& v) {
    if (!v || !std::isfinite(*v)) return "";
    char buf[40];
    std::snprintf(buf, sizeof buf, "%.6g", *v == 0 ? 0.0 : *v);  // no "-0"
    return buf;
}

}  // namespace

std::vector<ParameterRow> ToRows(const ParameterTable& table, const std::string& source,
                                 const std::string& receiver, const std::string& zone) {
    std::vector<ParameterRow> rows;
    std::string tableNote;
    for (const std::string& n : table.notes) tableNote += (tableNote.empty() ? "" : "; ") + n;
    for (const ParameterValue& v : table.values) {
        ParameterRow r;
        r.source = source;
        r.receiver = receiver;
        r.zone = zone;
        r.band = v.band;
        r.parameter = v.parameter;
        r.value = v.value;
        r.ci95 = v.ci95;
        r.unit = v.unit;
        r.note = v.note;
        if (rows.empty() && !tableNote.empty())
            r.note = r.note.empty() ? tableNote : tableNote + "; " + r.note;
        rows.push_back(std::move(r));
    }
    return rows;
}

const char* ParameterCsvHeader() { return "source,receiver,zone,band,parameter,value,ci95,unit,note"; }

std::string FormatParameterRow(const ParameterRow& r) {
    std::string line = CsvField(r.source) + "," + CsvField(r.receiver) + "," + CsvField(r.zone) + ",";
    line += r.band == 0 ? "avg" : std::to_string(r.band);
    line += "," + CsvField(r.parameter) + "," + Number(r.value) + "," + Number(r.ci95) + "," +
            CsvField(r.unit) + "," + CsvField(r.note);
    return line;
}

bool WriteParametersCsv(const std::string& path, const std::vector<ParameterRow>& rows,
                        Diagnostics& diag) {
    namespace fs = std::filesystem;
    const SourceLoc at{path, 0, 0, ""};
    fs::path p(path);
    std::string name = ".";
    name += p.filename().string();
    name += ".tmp";
    name += std::to_string(::getpid());
    const std::string tmp = (p.parent_path() / name).string();
    {
        std::ofstream out(tmp, std::ios::binary | std::ios::trunc);
        if (!out) {
            diag.Error(at, "cannot create the file (does the directory exist and is it writable?)");
            return false;
        }
        out << ParameterCsvHeader() << "\n";
        for (const ParameterRow& r : rows) out << FormatParameterRow(r) << "\n";
        out.flush();
        if (!out) {
            std::error_code ec;
            fs::remove(tmp, ec);
            diag.Error(at, "writing failed (disk full?)");
            return false;
        }
    }
    std::error_code ec;
    fs::rename(tmp, path, ec);
    if (ec) {
        fs::remove(tmp, ec);
        diag.Error(at, "cannot rename the finished temporary file into place: " + ec.message());
        return false;
    }
    return true;
}

}  // namespace hallwright
