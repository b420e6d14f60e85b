#pragma once
// SHA-256 of files (OpenSSL), recorded in run.json so a result can be tied to its inputs.
#include <optional>
#include <string>

namespace hallwright {
/* Lower-case hex SHA-256 of a file's bytes, or nothing if it cannot be read. */
std::optional<std::string> Sha256OfFile(const std::string& path);
/* Lower-case hex SHA-256 of a string. */
std::string Sha256OfString(const std::string& data);
}  // namespace hallwright
