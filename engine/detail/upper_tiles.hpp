// Visits every pair i < j of an n x n row-major matrix in 64 x 64 tiles, in parallel over
// tile rows: row i's and column i's entries of a tile stay in L1, so reading or writing D_ij
// beside D_ji streams memory instead of missing cache at every step.
#pragma once

#include <algorithm>
#include <cstddef>

namespace unfurl::detail {

template <class Body>
void for_upper_pairs_tiled(std::size_t n, Body&& body) {
  constexpr std::size_t kTile = 64;  // two 64 x 64 float tiles stay in L1
  const auto tiles = static_cast<std::ptrdiff_t>((n + kTile - 1) / kTile);
#pragma omp parallel for schedule(dynamic, 1)
  for (std::ptrdiff_t ti = 0; ti < tiles; ++ti) {
    const std::size_t i0 = static_cast<std::size_t>(ti) * kTile;
    const std::size_t i1 = std::min(n, i0 + kTile);
    for (std::size_t j0 = i0; j0 < n; j0 += kTile) {
      const std::size_t j1 = std::min(n, j0 + kTile);
      for (std::size_t i = i0; i < i1; ++i)
        for (std::size_t j = std::max(j0, i + 1); j < j1; ++j) body(i, j);
    }
  }
}

}  // namespace unfurl::detail
