#pragma once
// Disjoint sets with path halving; the smaller index becomes the root, so the result does not
// depend on the order of the unions' arguments (deterministic face and surface merging).
#include <algorithm>
#include <numeric>
#include <vector>

namespace hallwright {

struct UnionFind {
    std::vector<int> parent;
    explicit UnionFind(size_t n) : parent(n) { std::iota(parent.begin(), parent.end(), 0); }
    int Find(int x) {
        while (parent[x] != x) x = parent[x] = parent[parent[x]];
        return x;
    }
    void Unite(int a, int b) {
        a = Find(a);
        b = Find(b);
        if (a != b) parent[std::max(a, b)] = std::min(a, b);
    }
};

}  // namespace hallwright
