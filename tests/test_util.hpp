// Helpers shared by the Catch2 tests: small graphs from edge lists, brute-force oracles, and
// "equal up to rotation, reflection and scale" (Procrustes).
#pragma once

#include <algorithm>
#include <cmath>
#include <cstddef>
#include <limits>
#include <map>
#include <utility>
#include <vector>

#include "engine/distance_rows.hpp"
#include "engine/graph.hpp"
#include "engine/points.hpp"
#include "engine/random.hpp"

namespace unfurl::test {

struct Edge {
  NodeId a, b;
  float length;
};

// Undirected CSR graph from an edge list (both directions stored, targets sorted; a pair
// given twice keeps its shorter length).
inline NeighbourGraph graph_from_edges(std::size_t nodes, const std::vector<Edge>& edges) {
  std::vector<std::map<NodeId, float>> adjacent(nodes);
  auto add = [&](NodeId from, NodeId to, float length) {
    auto [it, fresh] = adjacent[from].emplace(to, length);
    if (!fresh) it->second = std::min(it->second, length);
  };
  for (const Edge& e : edges) {
    add(e.a, e.b, e.length);
    add(e.b, e.a, e.length);
  }
  NeighbourGraph g;
  g.offsets.push_back(0);
  for (const auto& row : adjacent) {
    for (const auto& [to, length] : row) {
      g.targets.push_back(to);
      g.lengths.push_back(length);
    }
    g.offsets.push_back(static_cast<std::int64_t>(g.targets.size()));
  }
  return g;
}

// A connected random graph: a random spanning tree plus `extra` random edges, lengths in
// [0.1, 1.1).
inline NeighbourGraph random_connected_graph(std::size_t nodes, std::size_t extra,
                                             std::uint64_t seed) {
  Random rng(seed);
  std::vector<Edge> edges;
  for (std::size_t i = 1; i < nodes; ++i)
    edges.push_back({static_cast<NodeId>(i), static_cast<NodeId>(rng.below(i)),
                     static_cast<float>(0.1 + rng.uniform())});
  for (std::size_t e = 0; e < extra; ++e) {
    const auto a = static_cast<NodeId>(rng.below(nodes)), b = static_cast<NodeId>(rng.below(nodes));
    if (a != b) edges.push_back({a, b, static_cast<float>(0.1 + rng.uniform())});
  }
  return graph_from_edges(nodes, edges);
}

// All-pairs shortest paths by Floyd-Warshall (Floyd, CACM 5(6), 1962): the brute-force oracle
// for Dijkstra on small graphs. Row-major n x n doubles, +infinity when unreachable.
inline std::vector<double> floyd_warshall(const NeighbourGraph& g) {
  const std::size_t n = g.nodes();
  std::vector<double> d(n * n, std::numeric_limits<double>::infinity());
  for (std::size_t i = 0; i < n; ++i) {
    d[i * n + i] = 0.0;
    for (auto e = g.offsets[i]; e < g.offsets[i + 1]; ++e)
      d[i * n + g.targets[e]] = std::min<double>(d[i * n + g.targets[e]], g.lengths[e]);
  }
  for (std::size_t k = 0; k < n; ++k)
    for (std::size_t i = 0; i < n; ++i)
      for (std::size_t j = 0; j < n; ++j)
        d[i * n + j] = std::min(d[i * n + j], d[i * n + k] + d[k * n + j]);
  return d;
}

// n x d points: standard normal values, or integers 0..3 (a grid with many ties and exact
// duplicates).
inline PointSet random_points(std::size_t n, std::size_t d, std::uint64_t seed, bool integer_grid) {
  Random rng(seed);
  PointSet p(n, d);
  for (float& v : p.values)
    v = integer_grid ? static_cast<float>(rng.below(4)) : static_cast<float>(rng.normal());
  return p;
}

// Euclidean distances from the points `sources` to every point, as DistanceRows.
inline DistanceRows euclidean_rows(const PointSet& p, const std::vector<NodeId>& sources) {
  DistanceRows r;
  r.rows = sources.size();
  r.cols = p.rows;
  r.sources = sources;
  r.values.resize(r.rows * r.cols);
  for (std::size_t s = 0; s < r.rows; ++s)
    for (std::size_t j = 0; j < p.rows; ++j) {
      double sum = 0.0;
      for (std::size_t c = 0; c < p.cols; ++c) {
        const double diff = double(p.row(sources[s])[c]) - p.row(j)[c];
        sum += diff * diff;
      }
      r.row(s)[j] = static_cast<float>(std::sqrt(sum));
    }
  return r;
}

// Procrustes disparity as scipy.spatial.procrustes defines it: centre both n x m
// configurations, scale each to unit Frobenius norm, rotate/reflect and scale the second
// onto the first; the disparity is the remaining sum of squared differences, which equals
// 1 - (sum of singular values of A'B)^2 (Gower 1975, "Generalized Procrustes analysis").
// 0 means "equal up to rotation, reflection, scale and shift". Defined in test_util.cpp, so
// Eigen's SVD is compiled once rather than in every test file that compares maps.
double procrustes_disparity_rows(const std::vector<double>& a, const std::vector<double>& b,
                                 std::size_t n, std::size_t m);

template <class A, class B>
double procrustes_disparity(const A& a, const B& b, std::size_t n, std::size_t m) {
  std::vector<double> x(n * m), y(n * m);
  for (std::size_t i = 0; i < n * m; ++i) {
    x[i] = static_cast<double>(a[i]);
    y[i] = static_cast<double>(b[i]);
  }
  return procrustes_disparity_rows(x, y, n, m);
}

// Largest relative difference between the pairwise distances of two n x m configurations.
template <class A, class B>
double pairwise_distance_error(const A& a, std::size_t ma, const B& b, std::size_t mb,
                               std::size_t n) {
  double worst = 0.0;
  for (std::size_t i = 0; i < n; ++i)
    for (std::size_t j = i + 1; j < n; ++j) {
      double da = 0.0, db = 0.0;
      for (std::size_t k = 0; k < ma; ++k) da += std::pow(double(a[i * ma + k]) - a[j * ma + k], 2);
      for (std::size_t k = 0; k < mb; ++k) db += std::pow(double(b[i * mb + k]) - b[j * mb + k], 2);
      worst =
          std::max(worst, std::abs(std::sqrt(da) - std::sqrt(db)) / std::max(std::sqrt(da), 1e-12));
    }
  return worst;
}

}  // namespace unfurl::test
