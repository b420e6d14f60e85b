#pragma once
// Small helpers shared by the report and compare pages: number formatting, axis ticks, the
// page frame (inline style sheet) and parameter wording.
#include <string>
#include <vector>

namespace hallwright::report {

/* Fixed-point text with `digits` decimals ("" for NaN). */
std::string Fixed(double v, int digits);
/* Decimals used to show a parameter (C80 1, EDT 2, ...). */
int ParameterDigits(const std::string& parameter);
/* Long label, e.g. "Clarity C80". */
std::string ParameterLabel(const std::string& parameter);
/* "500 Hz" or "single number" for band 0. */
std::string BandText(int band);
/* Zone name for display ("(no zone)" for ""). */
std::string ZoneText(const std::string& zone);
/* About n round tick values covering [lo, hi] (steps 1, 2, 5 x 10^k). */
std::vector<double> NiceTicks(double lo, double hi, int n);
/* Categorical colours for zones or series (our own palette). */
const std::vector<std::string>& SeriesColours();
/* <!doctype html> ... <body> with the inline style sheet; close with PageEnd(). */
std::string PageStart(const std::string& title);
std::string PageEnd();
/* Text safe inside <script type="application/json"> (no "<" left). */
std::string ScriptSafe(const std::string& json);

}  // namespace hallwright::report
