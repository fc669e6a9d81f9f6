// Benchmark fixture: a kNN-like graph of the Swiss roll, built with a grid-bucket search
// local to the benchmarks (the engine's own neighbour search lives in engine/neighbours.*).
// Neighbours are searched in the 27 cells around a point, so a neighbour farther than one
// cell can be missed: fine for timing Dijkstra, not a reference kNN.
#pragma once

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <numeric>
#include <tuple>
#include <utility>
#include <vector>

#include "engine/graph.hpp"
#include "engine/random.hpp"
#include "engine/synthetic.hpp"

namespace unfurl::bench {

// Node order of the graph: as generated (random along the sheet), or sorted by grid cell
// (neighbours close in memory, the "spatial renumbering" of DESIGN.md section 7).
enum class Order { random, spatial };

inline NeighbourGraph swiss_knn_graph(std::size_t n, std::size_t k, Order order,
                                      std::uint64_t seed = 1) {
  const PointSet p = swiss_roll(n, seed).points;
  // Cell side about twice the expected k-th neighbour distance on a sheet of area ~1900.
  const double cell = 2.0 * std::sqrt(k * 1900.0 / (M_PI * static_cast<double>(n)));
  float lo[3] = {1e30f, 1e30f, 1e30f};
  for (std::size_t i = 0; i < n; ++i)
    for (int c = 0; c < 3; ++c) lo[c] = std::min(lo[c], p.row(i)[c]);
  auto cell_of = [&](std::size_t i, int c) {
    return static_cast<std::int64_t>((p.row(i)[c] - lo[c]) / cell);
  };
  const std::int64_t side = 1 << 20;
  auto key = [&](std::int64_t x, std::int64_t y, std::int64_t z) {
    return (x * side + y) * side + z;
  };
  std::vector<std::pair<std::int64_t, NodeId>> sorted(n);
  for (std::size_t i = 0; i < n; ++i)
    sorted[i] = {key(cell_of(i, 0), cell_of(i, 1), cell_of(i, 2)), static_cast<NodeId>(i)};
  std::sort(sorted.begin(), sorted.end());
  // New id of each generated point: its rank in cell order, or itself.
  std::vector<NodeId> id(n);
  for (std::size_t r = 0; r < n; ++r)
    id[sorted[r].second] = order == Order::spatial ? static_cast<NodeId>(r) : sorted[r].second;

  std::vector<std::vector<std::pair<float, NodeId>>> near(n);
#pragma omp parallel for schedule(dynamic, 1024)
  for (std::ptrdiff_t ii = 0; ii < static_cast<std::ptrdiff_t>(n); ++ii) {
    const auto i = static_cast<std::size_t>(ii);
    std::vector<std::pair<float, NodeId>> cand;
    for (int dx = -1; dx <= 1; ++dx)
      for (int dy = -1; dy <= 1; ++dy)
        for (int dz = -1; dz <= 1; ++dz) {
          const std::int64_t q = key(cell_of(i, 0) + dx, cell_of(i, 1) + dy, cell_of(i, 2) + dz);
          auto it = std::lower_bound(sorted.begin(), sorted.end(), std::make_pair(q, NodeId{0}));
          for (; it != sorted.end() && it->first == q; ++it) {
            const NodeId j = it->second;
            if (j == i) continue;
            double s = 0.0;
            for (int c = 0; c < 3; ++c) s += std::pow(double(p.row(i)[c]) - p.row(j)[c], 2);
            cand.push_back({static_cast<float>(std::sqrt(s)), j});
          }
        }
    const std::size_t keep = std::min(k, cand.size());
    std::partial_sort(cand.begin(), cand.begin() + static_cast<std::ptrdiff_t>(keep), cand.end());
    cand.resize(keep);
    near[i] = std::move(cand);
  }
  // Union of the kNN relations, both directions stored, targets sorted.
  std::vector<std::tuple<NodeId, NodeId, float>> edges;
  edges.reserve(2 * n * k);
  for (std::size_t i = 0; i < n; ++i)
    for (auto [length, j] : near[i]) {
      edges.emplace_back(id[i], id[j], length);
      edges.emplace_back(id[j], id[i], length);
    }
  std::sort(edges.begin(), edges.end());
  edges.erase(std::unique(edges.begin(), edges.end(),
                          [](const auto& a, const auto& b) {
                            return std::get<0>(a) == std::get<0>(b) &&
                                   std::get<1>(a) == std::get<1>(b);
                          }),
              edges.end());
  NeighbourGraph g;
  g.offsets.assign(n + 1, 0);
  for (const auto& e : edges) ++g.offsets[std::get<0>(e) + 1];
  std::partial_sum(g.offsets.begin(), g.offsets.end(), g.offsets.begin());
  g.targets.reserve(edges.size());
  g.lengths.reserve(edges.size());
  for (const auto& e : edges) {
    g.targets.push_back(std::get<1>(e));
    g.lengths.push_back(std::get<2>(e));
  }
  return g;
}

}  // namespace unfurl::bench
