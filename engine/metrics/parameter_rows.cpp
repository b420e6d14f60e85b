// Row assembly with jackknife intervals, and the ISO 3382-1 Annex A single numbers.
#include "metrics/parameter_rows.h"

#include <cmath>
#include <limits>

namespace hallwright {

namespace metrics_detail {

void SetJackknifeInterval(ParameterValue& v) {
    if (!v.value || v.leaveOneOut.size() < 2) return;
    for (double x : v.leaveOneOut)
        if (!std::isfinite(x)) {
            v.note += v.note.empty() ? "" : "; ";
            v.note += "no interval: the value is missing in a jackknife replicate";
            return;
        }
    const int b = static_cast<int>(v.leaveOneOut.size());
    v.ci95 = StudentT975(b - 1) * JackknifeStandardError(v.leaveOneOut);
}

void RowBuilder::Add(const std::string& parameter, int band, const std::string& unit,
                     const std::vector<std::optional<double>>& rep, const std::string& note,
                     bool withCi) {
    ParameterValue v;
    v.parameter = parameter;
    v.band = band;
    v.unit = unit;
    v.value = rep.empty() ? std::nullopt : rep[0];
    if (!v.value) v.note = note;
    const double nan = std::numeric_limits<double>::quiet_NaN();
    if (batches_ > 0 && rep.size() == static_cast<size_t>(1 + 2 * batches_)) {
        for (int b = 0; b < batches_; ++b) {
            v.perBatch.push_back(rep[1 + b].value_or(nan));
            v.leaveOneOut.push_back(rep[1 + batches_ + b].value_or(nan));
        }
        if (withCi) SetJackknifeInterval(v);
    }
    table_.values.push_back(std::move(v));
}

void RowBuilder::AppendNote(const std::string& parameter, int band, const std::string& text) {
    if (text.empty()) return;
    for (ParameterValue& v : table_.values)
        if (v.parameter == parameter && v.band == band) v.note += text;
}

}  // namespace metrics_detail

void AddSingleNumbers(ParameterTable& table) {
    const double nan = std::numeric_limits<double>::quiet_NaN();
    for (const SingleNumber& s : kSingleNumbers) {
        if (table.Find(s.name, 0)) continue;  // already added (the call is idempotent)
        std::vector<const ParameterValue*> parts;
        bool reported = true;
        for (int hz : s.bandsHz) {
            if (hz == 0) continue;
            const ParameterValue* p = table.Find(s.parameter, hz);
            if (!p) reported = false;
            parts.push_back(p);
        }
        if (!reported || parts.empty()) continue;  // a band it needs is not reported
        ParameterValue v;
        v.parameter = s.name;
        v.band = 0;
        v.unit = parts[0]->unit;
        double sum = 0;
        bool ok = true;
        for (const ParameterValue* p : parts) {
            if (!p->value) {
                ok = false;
                if (v.note.empty())
                    v.note = "needs " + std::string(s.parameter) + " at " + std::to_string(p->band) +
                             " Hz: " + p->note;
            } else {
                sum += *p->value;
            }
        }
        if (ok) v.value = sum / parts.size();
        // Replicates of the mean are the means of the replicates.
        const size_t b = parts[0]->leaveOneOut.size();
        bool haveReplicates = b > 0;
        for (const ParameterValue* p : parts)
            haveReplicates &= p->leaveOneOut.size() == b && p->perBatch.size() == b;
        if (haveReplicates) {
            v.perBatch.assign(b, 0.0);
            v.leaveOneOut.assign(b, 0.0);
            for (const ParameterValue* p : parts)
                for (size_t i = 0; i < b; ++i) {
                    v.perBatch[i] += p->perBatch[i] / parts.size();
                    v.leaveOneOut[i] += p->leaveOneOut[i] / parts.size();
                }
            for (size_t i = 0; i < b; ++i) {
                if (!std::isfinite(v.perBatch[i])) v.perBatch[i] = nan;
                if (!std::isfinite(v.leaveOneOut[i])) v.leaveOneOut[i] = nan;
            }
            metrics_detail::SetJackknifeInterval(v);
        }
        table.values.push_back(std::move(v));
    }
}

}  // namespace hallwright
