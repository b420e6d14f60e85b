// `hallwright compare RUN_A RUN_B --out DIR`: two design options of one hall, seat by seat and
// zone by zone, in JNDs (compare.csv, compare.html).
#include <cstdio>
#include <filesystem>
#include <string>

#include "command.h"
#include "hallwright/run_compare.h"
#include "hallwright/run_tables.h"

namespace {

struct CompareArgs {
    std::string runA, runB, out;
    double toleranceM = 0.05;
};

int RunCompare(const CompareArgs& args) {
    hallwright::Diagnostics diag;
    auto a = hallwright::ReadRun(args.runA, diag);
    auto b = hallwright::ReadRun(args.runB, diag);
    if (!a || !b) return hwcli::Report(diag);
    hallwright::CompareOptions options;
    options.positionToleranceM = args.toleranceM;
    const auto c = hallwright::CompareRuns(*a, *b, options);
    if (c.seats.empty()) {
        diag.Error(hallwright::SourceLoc{args.runB + "/seats.csv", 0, 0, ""},
                   "no seat of run B matches a seat of run A by name or within " + std::to_string(args.toleranceM) +
                       " m — are these two runs of the same hall?");
        return hwcli::Report(diag);
    }
    std::error_code ec;
    std::filesystem::create_directories(args.out, ec);
    if (ec) {
        diag.Error(hallwright::SourceLoc{args.out, 0, 0, ""}, "cannot create the output directory: " + ec.message());
        hwcli::Report(diag);
        return hwcli::kExitRunFailure;
    }
    if (!hallwright::WriteTextFileAtomic(args.out + "/compare.csv", hallwright::FormatCompareCsv(c), diag) ||
        !hallwright::WriteTextFileAtomic(args.out + "/compare.html",
                                         hallwright::RenderCompareReport(c, args.runA, args.runB), diag)) {
        hwcli::Report(diag);
        return hwcli::kExitRunFailure;
    }
    const int rc = hwcli::Report(diag);  // warnings only at this point
    std::printf("%d seats matched by name, %d by position; %zu only in A, %zu only in B\n", c.matchedByName,
                c.matchedByPosition, c.unmatchedA.size(), c.unmatchedB.size());
    for (const auto& s : hallwright::ZoneChangeSentences(c)) std::printf("  %s\n", s.c_str());
    std::printf("wrote %s/compare.csv and %s/compare.html\n", args.out.c_str(), args.out.c_str());
    return rc;
}

const bool kRegistered = hwcli::AddCommand(
    "compare",
    "Compare two runs of the same hall (two design options) in JNDs\n"
    "Example: hallwright compare out/option-a out/option-b --out out/a-vs-b",
    [](CLI::App* sub) {
        auto args = std::make_shared<CompareArgs>();
        sub->add_option("RUN_A", args->runA, "output directory of the first run (option A)")->required();
        sub->add_option("RUN_B", args->runB, "output directory of the second run (option B)")->required();
        sub->add_option("--out", args->out, "directory for compare.csv and compare.html")->required();
        sub->add_option("--position-tolerance", args->toleranceM,
                        "match seats with different names within this distance (m)")
            ->default_val(0.05)
            ->check(CLI::PositiveNumber);
        return [args] { return RunCompare(*args); };
    });

}  // namespace
