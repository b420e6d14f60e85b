#include "hallwright/zones.h"

#include <algorithm>
#include <cmath>

namespace hallwright {

double StudentT975(int dof) {
    // Two-sided 95 % quantiles of Student's t (any statistics table, e.g. Abramowitz & Stegun
    // Table 26.10); beyond 30 degrees of freedom the normal value 1.960 is within 2 %.
    static const double kTable[] = {0,     12.706, 4.303, 3.182, 2.776, 2.571, 2.447, 2.365, 2.306, 2.262, 2.228,
                                    2.201, 2.179,  2.160, 2.145, 2.131, 2.120, 2.110, 2.101, 2.093, 2.086, 2.080,
                                    2.074, 2.069,  2.064, 2.060, 2.056, 2.052, 2.048, 2.045, 2.042};
    if (dof <= 0) return 0;
    if (dof <= 30) return kTable[dof];
    return 1.960;
}

double JackknifeStandardError(const std::vector<double>& replicates) {
    const size_t b = replicates.size();
    if (b < 2) return 0;
    double mean = 0;
    for (double x : replicates) mean += x;
    mean /= static_cast<double>(b);
    double ss = 0;
    for (double x : replicates) ss += (x - mean) * (x - mean);
    return std::sqrt((static_cast<double>(b) - 1.0) / static_cast<double>(b) * ss);
}

ZoneStatistic SummarizeZone(const std::vector<SeatEstimate>& seats) {
    ZoneStatistic z;
    size_t batches = 0;
    for (const auto& s : seats)
        if (s.value) batches = std::max(batches, s.replicates.size());
    z.replicateMeans.assign(batches, 0.0);
    double sum = 0, sumSq = 0;
    // A seat whose parameter cannot be computed without one of the batches (a non-finite
    // replicate, e.g. a decay at the edge of its dynamic range) is too unstable to average:
    // it is left out of the zone, like a seat without a value.
    auto usable = [&](const SeatEstimate& s) {
        if (!s.value || !std::isfinite(*s.value) || s.replicates.size() != batches) return false;
        for (double r : s.replicates)
            if (!std::isfinite(r)) return false;
        return true;
    };
    for (const auto& s : seats) {
        if (!usable(s)) continue;
        const double v = *s.value;
        if (z.nSeats == 0) z.min = z.max = v;
        z.min = std::min(z.min, v);
        z.max = std::max(z.max, v);
        sum += v;
        sumSq += v * v;
        for (size_t j = 0; j < batches; ++j) z.replicateMeans[j] += s.replicates[j];
        ++z.nSeats;
    }
    if (z.nSeats == 0) {
        z.replicateMeans.clear();
        return z;
    }
    const double n = z.nSeats;
    z.mean = sum / n;
    z.sd = z.nSeats > 1 ? std::sqrt(std::max(0.0, (sumSq - n * z.mean * z.mean) / (n - 1.0))) : 0.0;
    for (double& m : z.replicateMeans) m /= n;
    z.ci95 = StudentT975(static_cast<int>(batches) - 1) * JackknifeStandardError(z.replicateMeans);
    return z;
}

std::optional<ZoneDifference> CompareZones(const ZoneStatistic& a, const ZoneStatistic& b, const Jnd& jnd) {
    if (a.nSeats == 0 || b.nSeats == 0 || a.replicateMeans.size() != b.replicateMeans.size()) return std::nullopt;
    const double scale = jnd.relative ? jnd.value * 0.5 * (a.mean + b.mean) : jnd.value;
    if (!(scale > 0)) return std::nullopt;
    ZoneDifference d;
    d.difference = a.mean - b.mean;
    d.differenceJnd = d.difference / scale;
    std::vector<double> replicates(a.replicateMeans.size());
    for (size_t j = 0; j < replicates.size(); ++j) {
        const double s = jnd.relative ? jnd.value * 0.5 * (a.replicateMeans[j] + b.replicateMeans[j]) : jnd.value;
        replicates[j] = (a.replicateMeans[j] - b.replicateMeans[j]) / s;
    }
    d.ci95Jnd = StudentT975(static_cast<int>(replicates.size()) - 1) * JackknifeStandardError(replicates);
    return d;
}

}  // namespace hallwright
