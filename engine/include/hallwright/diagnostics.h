#pragma once
// Diagnostics: user-facing errors and warnings collected by a stage and shown by the CLI.
// Every message names where it comes from as `file:line: severity: message`; stages never
// print and never exit.
#include <cstdio>
#include <string>
#include <string_view>
#include <vector>

namespace hallwright {

struct SourceLoc {
    std::string file;   // path as the user gave it (empty: no file)
    int line = 0;       // 1-based; 0 = the whole file
    int col = 0;        // 1-based; 0 = not known
    std::string where;  // extra locator when lines are unknown, e.g. "face 418 of group stage"
};

enum class Severity { kError, kWarning, kNote };

struct Diagnostic {
    Severity severity;
    SourceLoc at;
    std::string message;
};

/* file:line:col: severity: message (parts that are unknown are left out). */
std::string FormatDiagnostic(const Diagnostic& d);

class Diagnostics {
  public:
    void Error(SourceLoc at, std::string msg) { Add(Severity::kError, std::move(at), std::move(msg)); }
    void Warning(SourceLoc at, std::string msg) { Add(Severity::kWarning, std::move(at), std::move(msg)); }
    void Note(SourceLoc at, std::string msg) { Add(Severity::kNote, std::move(at), std::move(msg)); }
    void Add(Severity s, SourceLoc at, std::string msg) { items_.push_back({s, std::move(at), std::move(msg)}); }
    void Append(const Diagnostics& other) { items_.insert(items_.end(), other.items_.begin(), other.items_.end()); }

    bool HasErrors() const;
    int ErrorCount() const;
    int WarningCount() const;
    const std::vector<Diagnostic>& Items() const { return items_; }
    /* All messages in input order, one line each. */
    std::string ToString() const;
    void Print(std::FILE* out) const;

  private:
    std::vector<Diagnostic> items_;
};

/* Thrown only for broken invariants inside the engine (never for user input). */
[[noreturn]] void CheckFailed(const char* file, int line, const char* expr, const std::string& detail);

}  // namespace hallwright

#define HW_CHECK(cond, detail)                                                  \
    do {                                                                        \
        if (!(cond)) ::hallwright::CheckFailed(__FILE__, __LINE__, #cond, detail); \
    } while (false)
