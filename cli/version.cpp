// `hallwright version`: program and library versions (also in run.json).
#include <cstdio>

#include "command.h"
#include "hallwright/versions.h"

namespace {
const bool kRegistered = hwcli::AddCommand(
    "version", "Print program and library versions\nExample: hallwright version", [](CLI::App* sub) {
        return [] {
            for (const auto& [name, version] : hallwright::LibraryVersions())
                std::printf("%s %s\n", name.c_str(), version.c_str());
            return hwcli::kExitOk;
        };
    });
}  // namespace
