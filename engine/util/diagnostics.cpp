#include "hallwright/diagnostics.h"

#include <stdexcept>

namespace hallwright {

std::string FormatDiagnostic(const Diagnostic& d) {
    std::string out;
    if (!d.at.file.empty()) {
        out += d.at.file;
        if (d.at.line > 0) {
            out += ":" + std::to_string(d.at.line);
            if (d.at.col > 0) out += ":" + std::to_string(d.at.col);
        }
        if (!d.at.where.empty()) out += ": " + d.at.where;
        out += ": ";
    } else if (!d.at.where.empty()) {
        out += d.at.where + ": ";
    }
    switch (d.severity) {
        case Severity::kError: out += "error: "; break;
        case Severity::kWarning: out += "warning: "; break;
        case Severity::kNote: out += "note: "; break;
    }
    out += d.message;
    return out;
}

bool Diagnostics::HasErrors() const { return ErrorCount() > 0; }

int Diagnostics::ErrorCount() const {
    int n = 0;
    for (const auto& d : items_) n += d.severity == Severity::kError;
    return n;
}

int Diagnostics::WarningCount() const {
    int n = 0;
    for (const auto& d : items_) n += d.severity == Severity::kWarning;
    return n;
}

std::string Diagnostics::ToString() const {
    std::string out;
    for (const auto& d : items_) out += FormatDiagnostic(d) + "\n";
    return out;
}

void Diagnostics::Print(std::FILE* out) const {
    for (const auto& d : items_) std::fprintf(out, "%s\n", FormatDiagnostic(d).c_str());
}

void CheckFailed(const char* file, int line, const char* expr, const std::string& detail) {
    throw std::logic_error(std::string("internal check failed at ") + file + ":" + std::to_string(line) +
                           ": " + expr + (detail.empty() ? "" : " (" + detail + ")"));
}

}  // namespace hallwright
