#pragma once
// Uniform grid over receiver spheres: the segments of the ray tracer visit only the cells
// they cross (3-D DDA, Amanatides & Woo 1987), so the cost per segment does not grow with the
// number of seats. Private to engine/propagation.
#include <cmath>
#include <cstdint>
#include <vector>

#include "hallwright/mesh.h"

namespace hallwright {

class ReceiverGrid {
  public:
    /* Builds the grid for spheres (centre, radius); empty input gives an empty grid. */
    ReceiverGrid(const std::vector<Vec3>& centres, const std::vector<double>& radii);

    size_t Size() const { return cx_.size(); }
    double InvVolume(uint32_t i) const { return invVolume_[i]; }

    /* Calls f(receiver, tMid, chord) once for each sphere that the segment o + t d,
       t in [0, len] (d unit), crosses: tMid = centre of the chord inside the sphere.
       `stamp`/`stampId` (one slot per receiver, id fresh per segment) avoid repeats. */
    template <class F>
    void Visit(const Vec3& o, const Vec3& d, double len, std::vector<uint64_t>& stamp,
               uint64_t stampId, F&& f) const;

  private:
    std::vector<double> cx_, cy_, cz_, r2_, invVolume_;
    double lo_[3] = {0, 0, 0}, hi_[3] = {0, 0, 0};
    double cell_ = 1, invCell_ = 1;
    int n_[3] = {0, 0, 0};
    std::vector<uint32_t> cellStart_;  // CSR: receivers of cell c at [cellStart_[c], cellStart_[c+1])
    std::vector<uint32_t> items_;
};

template <class F>
void ReceiverGrid::Visit(const Vec3& o, const Vec3& d, double len, std::vector<uint64_t>& stamp,
                         uint64_t stampId, F&& f) const {
    if (cx_.empty() || !(len > 0)) return;
    const double org[3] = {o.x(), o.y(), o.z()};
    const double dir[3] = {d.x(), d.y(), d.z()};
    // Clip the segment to the grid's box (slab test).
    double t0 = 0, t1 = len;
    for (int a = 0; a < 3; ++a) {
        if (std::abs(dir[a]) < 1e-300) {
            if (org[a] < lo_[a] || org[a] > hi_[a]) return;
            continue;
        }
        double inv = 1.0 / dir[a];
        double ta = (lo_[a] - org[a]) * inv, tb = (hi_[a] - org[a]) * inv;
        if (ta > tb) std::swap(ta, tb);
        t0 = std::max(t0, ta);
        t1 = std::min(t1, tb);
        if (t0 > t1) return;
    }
    // Walk the cells along the clipped segment.
    int idx[3], step[3];
    double tMax[3], tDelta[3];
    for (int a = 0; a < 3; ++a) {
        double p = org[a] + dir[a] * t0;
        int i = static_cast<int>(std::floor((p - lo_[a]) * invCell_));
        idx[a] = i < 0 ? 0 : (i >= n_[a] ? n_[a] - 1 : i);
        if (dir[a] > 0) {
            step[a] = 1;
            tMax[a] = (lo_[a] + (idx[a] + 1) * cell_ - org[a]) / dir[a];
            tDelta[a] = cell_ / dir[a];
        } else if (dir[a] < 0) {
            step[a] = -1;
            tMax[a] = (lo_[a] + idx[a] * cell_ - org[a]) / dir[a];
            tDelta[a] = -cell_ / dir[a];
        } else {
            step[a] = 0;
            tMax[a] = tDelta[a] = INFINITY;
        }
    }
    for (;;) {
        const size_t c = (static_cast<size_t>(idx[2]) * n_[1] + idx[1]) * n_[0] + idx[0];
        for (uint32_t k = cellStart_[c]; k < cellStart_[c + 1]; ++k) {
            const uint32_t r = items_[k];
            if (stamp[r] == stampId) continue;
            const double ox = cx_[r] - org[0], oy = cy_[r] - org[1], oz = cz_[r] - org[2];
            const double b = ox * dir[0] + oy * dir[1] + oz * dir[2];
            const double perp2 = ox * ox + oy * oy + oz * oz - b * b;
            if (perp2 >= r2_[r]) continue;
            const double h = std::sqrt(r2_[r] - perp2);
            const double ta = std::max(b - h, 0.0), tb = std::min(b + h, len);
            if (tb <= ta) continue;
            stamp[r] = stampId;
            f(r, 0.5 * (ta + tb), tb - ta);
        }
        int a = tMax[0] < tMax[1] ? (tMax[0] < tMax[2] ? 0 : 2) : (tMax[1] < tMax[2] ? 1 : 2);
        if (tMax[a] > t1) break;
        idx[a] += step[a];
        if (idx[a] < 0 || idx[a] >= n_[a]) break;
        tMax[a] += tDelta[a];
    }
}

}  // namespace hallwright
