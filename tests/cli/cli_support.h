#pragma once
// Runs the built `hallwright` binary from tests and captures its output and exit code.
#include <string>

namespace hallwright::test {
struct CommandResult {
    int exitCode = -1;
    std::string out, err;
};
/* Runs `hallwright <args>` (a shell-quoted argument string) from the source directory. */
CommandResult RunHallwright(const std::string& args);
}  // namespace hallwright::test
