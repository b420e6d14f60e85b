#pragma once
// Private to engine/metrics: builds ParameterValue rows from replicate values
// (replicate 0 = all rays; then B single batches; then B leave-one-out sets).
#include <optional>
#include <string>
#include <vector>

#include "hallwright/metrics.h"

namespace hallwright::metrics_detail {

class RowBuilder {
  public:
    /* batches = 0: one replicate only (WAV path, no intervals). */
    RowBuilder(ParameterTable& table, int batches) : table_(table), batches_(batches) {}
    /* Adds one row; withCi = false leaves ci95 empty (fit diagnostics). */
    void Add(const std::string& parameter, int band, const std::string& unit,
             const std::vector<std::optional<double>>& replicates, const std::string& note,
             bool withCi = true);
    void AppendNote(const std::string& parameter, int band, const std::string& text);

  private:
    ParameterTable& table_;
    int batches_;
};

/* Fills ci95 of `v` from its leave-one-out replicates (NaN entries: no interval). */
void SetJackknifeInterval(ParameterValue& v);

}  // namespace hallwright::metrics_detail
