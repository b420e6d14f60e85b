#pragma once
// Long-form parameter table as CSV:
//   source,receiver,zone,band,parameter,value,ci95,unit,note
// band = nominal Hz as an integer (125 ... 8000) or `avg` for single numbers (STI included);
// empty value/ci95 when not computed (the note says why). Written to a temporary name and
// renamed, so a reader never sees a half-written file.
#include <optional>
#include <string>
#include <vector>

#include "hallwright/diagnostics.h"
#include "hallwright/metrics.h"

namespace hallwright {

struct ParameterRow {
    std::string source, receiver, zone;
    int band = 0;                 // nominal Hz, 0 = avg
    std::string parameter;
    std::optional<double> value, ci95;
    std::string unit, note;
};

/* Rows of one (source, receiver) table, in table order; table-wide notes go to the first row. */
std::vector<ParameterRow> ToRows(const ParameterTable& table, const std::string& source,
                                 const std::string& receiver, const std::string& zone);

/* The CSV header line (without newline). */
const char* ParameterCsvHeader();
/* One CSV line (without newline); numbers with 6 significant digits, text quoted if needed. */
std::string FormatParameterRow(const ParameterRow& row);

/* Writes header + rows to `path` (temp file + rename); false and an error on failure. */
bool WriteParametersCsv(const std::string& path, const std::vector<ParameterRow>& rows,
                        Diagnostics& diag);

}  // namespace hallwright
