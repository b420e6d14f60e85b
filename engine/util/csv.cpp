// RFC 4180 CSV records (csv.h).
#include "util/csv.h"

namespace hallwright {

bool ParseCsv(const std::string& text, const std::string& path, std::vector<CsvRecord>& out, Diagnostics& diag) {
    int line = 1;
    size_t i = 0;
    while (i < text.size()) {
        CsvRecord rec;
        rec.line = line;
        std::string field;
        bool quoted = false, wasQuoted = false;
        for (;;) {
            if (i >= text.size()) {
                if (quoted) {
                    diag.Error(SourceLoc{path, rec.line, 0, ""},
                               "a quoted field is never closed; the file is cut short or garbled — rerun the simulation");
                    return false;
                }
                rec.fields.push_back(field);
                break;
            }
            const char c = text[i++];
            if (quoted) {
                if (c == '"') {
                    if (i < text.size() && text[i] == '"') field += '"', ++i;
                    else quoted = false;
                } else {
                    if (c == '\n') ++line;
                    field += c;
                }
            } else if (c == '"' && field.empty() && !wasQuoted) {
                quoted = wasQuoted = true;
            } else if (c == ',') {
                rec.fields.push_back(field);
                field.clear();
                wasQuoted = false;
            } else if (c == '\n' || c == '\r') {
                if (c == '\r' && i < text.size() && text[i] == '\n') ++i;
                ++line;
                rec.fields.push_back(field);
                break;
            } else {
                field += c;
            }
        }
        if (!(rec.fields.size() == 1 && rec.fields[0].empty())) out.push_back(std::move(rec));
    }
    return true;
}

}  // namespace hallwright
