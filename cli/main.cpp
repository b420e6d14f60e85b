// hallwright command line: wires the engine's stages together. Each subcommand lives in its
// own file and registers itself (command.h).
#include <cstdio>
#include <memory>
#include <xmmintrin.h>
#include <pmmintrin.h>

#include <oneapi/tbb/global_control.h>

#include "command.h"

namespace hwcli {

std::vector<CommandEntry>& Commands() {
    static std::vector<CommandEntry> commands;
    return commands;
}

bool AddCommand(std::string name, std::string description, CommandSetup setup) {
    Commands().push_back({std::move(name), std::move(description), std::move(setup)});
    return true;
}

int Report(const hallwright::Diagnostics& diag) {
    diag.Print(stderr);
    return diag.HasErrors() ? kExitBadInput : kExitOk;
}

static std::unique_ptr<tbb::global_control> gThreads;

void SetThreadCount(int threads) {
    if (threads > 0)
        gThreads = std::make_unique<tbb::global_control>(tbb::global_control::max_allowed_parallelism,
                                                         static_cast<size_t>(threads));
}

}  // namespace hwcli

int main(int argc, char** argv) {
    // Flush denormals to zero before any TBB arena exists (arenas copy the FP settings).
    _MM_SET_FLUSH_ZERO_MODE(_MM_FLUSH_ZERO_ON);
    _MM_SET_DENORMALS_ZERO_MODE(_MM_DENORMALS_ZERO_ON);

    CLI::App app{"hallwright: room-acoustics prediction for auditoria (image sources + ray tracing)"};
    app.set_version_flag("--version", HALLWRIGHT_VERSION);
    app.require_subcommand(1);
    std::vector<std::pair<CLI::App*, std::function<int()>>> runs;
    for (auto& entry : hwcli::Commands()) {
        CLI::App* sub = app.add_subcommand(entry.name, entry.description);
        runs.emplace_back(sub, entry.setup(sub));
    }
    try {
        app.parse(argc, argv);
    } catch (const CLI::ParseError& e) {
        int rc = app.exit(e);
        return rc == 0 ? hwcli::kExitOk : hwcli::kExitBadCommandLine;
    }
    for (auto& [sub, run] : runs) {
        if (sub->parsed()) {
            try {
                return run();
            } catch (const std::exception& e) {
                std::fprintf(stderr, "hallwright: error: %s\n", e.what());
                return hwcli::kExitRunFailure;
            }
        }
    }
    return hwcli::kExitBadCommandLine;
}
