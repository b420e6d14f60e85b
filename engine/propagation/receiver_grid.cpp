// Uniform grid over receiver spheres (see receiver_grid.h).
#include "propagation/receiver_grid.h"

#include <algorithm>

namespace hallwright {

ReceiverGrid::ReceiverGrid(const std::vector<Vec3>& centres, const std::vector<double>& radii) {
    const size_t n = centres.size();
    if (n == 0) return;
    double rMax = 0;
    for (int a = 0; a < 3; ++a) {
        lo_[a] = INFINITY;
        hi_[a] = -INFINITY;
    }
    for (size_t i = 0; i < n; ++i) {
        cx_.push_back(centres[i].x());
        cy_.push_back(centres[i].y());
        cz_.push_back(centres[i].z());
        r2_.push_back(radii[i] * radii[i]);
        invVolume_.push_back(1.0 / (4.0 / 3.0 * 3.14159265358979323846 * radii[i] * radii[i] * radii[i]));
        rMax = std::max(rMax, radii[i]);
        for (int a = 0; a < 3; ++a) {
            lo_[a] = std::min(lo_[a], centres[i][a] - radii[i]);
            hi_[a] = std::max(hi_[a], centres[i][a] + radii[i]);
        }
    }
    // Cells of twice the largest radius, coarsened if the grid would exceed ~4 million cells.
    cell_ = std::max(2 * rMax, 1e-3);
    for (;;) {
        double cells = 1;
        for (int a = 0; a < 3; ++a) cells *= std::floor((hi_[a] - lo_[a]) / cell_) + 1;
        if (cells <= 4e6) break;
        cell_ *= 1.5;
    }
    invCell_ = 1.0 / cell_;
    for (int a = 0; a < 3; ++a) {
        n_[a] = static_cast<int>(std::floor((hi_[a] - lo_[a]) * invCell_)) + 1;
        hi_[a] = lo_[a] + n_[a] * cell_;
    }
    const size_t cellCount = static_cast<size_t>(n_[0]) * n_[1] * n_[2];
    // Counting pass, then fill (CSR); receivers go into every cell their box overlaps.
    std::vector<uint32_t> counts(cellCount + 1, 0);
    auto forCells = [&](size_t i, auto&& g) {
        int a0[3], a1[3];
        for (int a = 0; a < 3; ++a) {
            a0[a] = std::clamp(static_cast<int>(std::floor((centres[i][a] - radii[i] - lo_[a]) * invCell_)), 0, n_[a] - 1);
            a1[a] = std::clamp(static_cast<int>(std::floor((centres[i][a] + radii[i] - lo_[a]) * invCell_)), 0, n_[a] - 1);
        }
        for (int z = a0[2]; z <= a1[2]; ++z)
            for (int y = a0[1]; y <= a1[1]; ++y)
                for (int x = a0[0]; x <= a1[0]; ++x) g((static_cast<size_t>(z) * n_[1] + y) * n_[0] + x);
    };
    for (size_t i = 0; i < n; ++i) forCells(i, [&](size_t c) { ++counts[c + 1]; });
    for (size_t c = 0; c < cellCount; ++c) counts[c + 1] += counts[c];
    cellStart_ = counts;
    items_.resize(counts[cellCount]);
    std::vector<uint32_t> fill(counts.begin(), counts.end() - 1);
    for (size_t i = 0; i < n; ++i) forCells(i, [&](size_t c) { items_[fill[c]++] = static_cast<uint32_t>(i); });
}

}  // namespace hallwright
