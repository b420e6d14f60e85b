#pragma once
// Small text helpers shared by the scene, OBJ and materials readers: reading a user's file
// with clear errors, number parsing that rejects nan/inf/garbage, and did-you-mean hints.
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "hallwright/diagnostics.h"

namespace hallwright::text {

/* Reads a whole file; on failure reports at `refAt` (or at the file itself when refAt has
   no file) that it is unreadable, a directory, empty, or binary, and returns nothing. */
std::optional<std::string> ReadUserFile(const std::string& path, std::string_view what,
                                        const SourceLoc& refAt, Diagnostics& diag);

/* Offset of the first NUL byte, or npos: text formats never contain one. */
size_t FindNulByte(std::string_view text);

/* Parses a whole token as a finite double (no trailing characters, no nan/inf). */
std::optional<double> ParseFiniteDouble(std::string_view token);
/* True when the token is a spelling of nan or inf (so messages can say "not finite"). */
bool IsNanOrInfSpelling(std::string_view token);
/* Parses a whole token as a signed 64-bit integer. */
std::optional<long long> ParseInteger(std::string_view token);

/* Levenshtein distance (insert, delete, substitute all cost 1). */
int EditDistance(std::string_view a, std::string_view b);
/* The closest candidate when it is close enough to be a likely misspelling, else "". */
std::string ClosestMatch(std::string_view word, const std::vector<std::string>& candidates);
/* " (did you mean \"x\"?)" or "" when nothing is close. */
std::string DidYouMean(std::string_view word, const std::vector<std::string>& candidates);
/* "a, b, c" (at most `limit` items, then ", ..."). */
std::string JoinList(const std::vector<std::string>& items, size_t limit = 12);

/* Removes leading and trailing spaces, tabs and carriage returns. */
std::string_view Trim(std::string_view s);

}  // namespace hallwright::text
