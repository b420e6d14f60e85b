// Text helpers for the readers (see text_util.h).
#include "scene/text_util.h"

#include <algorithm>
#include <cerrno>
#include <charconv>
#include <cmath>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <sstream>

namespace hallwright::text {

std::optional<std::string> ReadUserFile(const std::string& path, std::string_view what,
                                        const SourceLoc& refAt, Diagnostics& diag) {
    SourceLoc at = refAt.file.empty() ? SourceLoc{path, 0, 0, ""} : refAt;
    const std::string subject = std::string(what) + " '" + path + "'";
    std::error_code ec;
    if (std::filesystem::is_directory(path, ec)) {
        diag.Error(at, subject + " is a directory, not a file; give the path of the file itself");
        return std::nullopt;
    }
    std::ifstream in(path, std::ios::binary);
    if (!in) {
        const int err = errno;
        diag.Error(at, "cannot read " + subject + ": " + std::strerror(err) +
                           "; check the path (relative paths are taken from the scene file's folder)");
        return std::nullopt;
    }
    std::ostringstream buffer;
    buffer << in.rdbuf();
    if (in.bad()) {
        diag.Error(at, "cannot read " + subject + ": read error");
        return std::nullopt;
    }
    std::string text = buffer.str();
    if (text.empty()) {
        diag.Error(at, subject + " is empty; export it again or point to the right file");
        return std::nullopt;
    }
    if (size_t nul = FindNulByte(text); nul != std::string::npos) {
        diag.Error(at, subject + " is a binary file (NUL byte at offset " + std::to_string(nul) +
                           "); it must be plain text (save/export it as text)");
        return std::nullopt;
    }
    return text;
}

size_t FindNulByte(std::string_view text) { return text.find('\0'); }

bool IsNanOrInfSpelling(std::string_view token) {
    std::string t;
    for (char c : token)
        if (c != '+' && c != '-') t += static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
    return t == "nan" || t == "inf" || t == "infinity" || t.rfind("nan(", 0) == 0;
}

std::optional<double> ParseFiniteDouble(std::string_view token) {
    if (token.empty()) return std::nullopt;
    // from_chars rejects a leading '+', which OBJ and CSV writers sometimes emit.
    if (token.front() == '+') token.remove_prefix(1);
    if (token.empty() || token.front() == '+' || (token.front() == '-' && token.size() == 1))
        return std::nullopt;
    double value = 0;
    const char* end = token.data() + token.size();
    auto [ptr, ec] = std::from_chars(token.data(), end, value);
    if (ec != std::errc() || ptr != end || !std::isfinite(value)) return std::nullopt;
    return value;
}

std::optional<long long> ParseInteger(std::string_view token) {
    if (!token.empty() && token.front() == '+') token.remove_prefix(1);
    if (token.empty()) return std::nullopt;
    long long value = 0;
    const char* end = token.data() + token.size();
    auto [ptr, ec] = std::from_chars(token.data(), end, value);
    if (ec != std::errc() || ptr != end) return std::nullopt;
    return value;
}

int EditDistance(std::string_view a, std::string_view b) {
    std::vector<int> row(b.size() + 1);
    for (size_t j = 0; j <= b.size(); ++j) row[j] = static_cast<int>(j);
    for (size_t i = 1; i <= a.size(); ++i) {
        int diagonal = row[0];
        row[0] = static_cast<int>(i);
        for (size_t j = 1; j <= b.size(); ++j) {
            const int above = row[j];
            row[j] = std::min({row[j] + 1, row[j - 1] + 1, diagonal + (a[i - 1] != b[j - 1])});
            diagonal = above;
        }
    }
    return row[b.size()];
}

std::string ClosestMatch(std::string_view word, const std::vector<std::string>& candidates) {
    // Close enough: at most a third of the longer word changed (and at least 1, at most 3 edits).
    std::string best;
    int bestDistance = 1 << 30;
    for (const auto& c : candidates) {
        const int d = EditDistance(word, c);
        const int limit = std::clamp(static_cast<int>(std::max(word.size(), c.size()) / 3), 1, 3);
        if (d <= limit && d < bestDistance) {
            best = c;
            bestDistance = d;
        }
    }
    return best;
}

std::string DidYouMean(std::string_view word, const std::vector<std::string>& candidates) {
    const std::string best = ClosestMatch(word, candidates);
    return best.empty() ? "" : " (did you mean \"" + best + "\"?)";
}

std::string JoinList(const std::vector<std::string>& items, size_t limit) {
    std::string out;
    for (size_t i = 0; i < items.size() && i < limit; ++i) out += (i ? ", " : "") + items[i];
    if (items.size() > limit) out += ", ...";
    return out;
}

std::string_view Trim(std::string_view s) {
    while (!s.empty() && (s.front() == ' ' || s.front() == '\t' || s.front() == '\r')) s.remove_prefix(1);
    while (!s.empty() && (s.back() == ' ' || s.back() == '\t' || s.back() == '\r')) s.remove_suffix(1);
    return s;
}

}  // namespace hallwright::text
