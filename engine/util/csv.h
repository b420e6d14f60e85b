#pragma once
// RFC 4180 CSV records, private to the engine: the readers of run outputs share this one
// parser (parameters.csv, seats.csv, the --paths tables).
#include <string>
#include <vector>

#include "hallwright/diagnostics.h"

namespace hallwright {

struct CsvRecord {
    std::vector<std::string> fields;
    int line = 0;  // line where the record starts (1-based)
};

/* Splits `text` into records (quoted fields may hold commas, doubled quotes and newlines;
   blank lines are skipped); false and an error at path:line for an unclosed quote. */
bool ParseCsv(const std::string& text, const std::string& path, std::vector<CsvRecord>& out, Diagnostics& diag);

}  // namespace hallwright
