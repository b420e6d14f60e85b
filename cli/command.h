#pragma once
// Subcommand registry: each cli/<name>.cpp registers one subcommand at static-init time, so
// adding a command touches no shared file. Exit codes (README): 0 success, 1 bad input,
// 2 bad command line, 3 failure during a run.
#include <functional>
#include <string>
#include <vector>

#include <CLI/CLI.hpp>

#include "hallwright/diagnostics.h"

namespace hwcli {

constexpr int kExitOk = 0;
constexpr int kExitBadInput = 1;
constexpr int kExitBadCommandLine = 2;
constexpr int kExitRunFailure = 3;

/* Adds the subcommand's options to `sub` and returns the function that runs it. */
using CommandSetup = std::function<std::function<int()>(CLI::App* sub)>;

struct CommandEntry {
    std::string name, description;
    CommandSetup setup;
};

std::vector<CommandEntry>& Commands();
bool AddCommand(std::string name, std::string description, CommandSetup setup);

/* Prints diagnostics to stderr; returns kExitBadInput if any is an error, else kExitOk. */
int Report(const hallwright::Diagnostics& diag);

/* Applies --threads (0 = all cores) for the rest of the process. */
void SetThreadCount(int threads);

}  // namespace hwcli
