#include "cli/cli_support.h"

#include <sys/wait.h>
#include <unistd.h>

#include <cstdio>
#include <filesystem>
#include <fstream>
#include <sstream>

#include "test_support.h"

namespace hallwright::test {

CommandResult RunHallwright(const std::string& args) {
    static int counter = 0;
    // ctest runs each test in its own process: the pid keeps their scratch folders apart.
    const std::string dir = TempDir("cli-run-" + std::to_string(getpid()) + "-" + std::to_string(counter++));
    const std::string outPath = dir + "/stdout", errPath = dir + "/stderr";
    const std::string cmd = "cd '" + std::string(HW_SOURCE_DIR) + "' && '" + std::string(HW_BINARY_DIR) +
                            "/hallwright' " + args + " >'" + outPath + "' 2>'" + errPath + "'";
    const int status = std::system(cmd.c_str());
    CommandResult r;
    r.exitCode = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
    auto slurp = [](const std::string& p) {
        std::ifstream in(p);
        std::stringstream ss;
        ss << in.rdbuf();
        return ss.str();
    };
    r.out = slurp(outPath);
    r.err = slurp(errPath);
    return r;
}

}  // namespace hallwright::test
