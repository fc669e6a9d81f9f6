#include "engine/graph_build.hpp"

#include <algorithm>
#include <cmath>
#include <string>
#include <vector>

#include "engine/detail/csr.hpp"
#include "engine/error.hpp"

namespace unfurl {
namespace {

std::string edge_name(std::size_t i) {
  return "edge " + std::to_string(i);
}

}  // namespace

NeighbourGraph graph_from_edges(std::size_t nodes, std::span<const NodeId> from,
                                std::span<const NodeId> to, std::span<const float> length) {
  if (from.size() != to.size() || from.size() != length.size())
    throw DataError("edges: " + std::to_string(from.size()) + " sources, " +
                    std::to_string(to.size()) + " targets and " + std::to_string(length.size()) +
                    " lengths; the three must be equally long");
  std::vector<detail::Edge> edges;
  edges.reserve(from.size());
  for (std::size_t i = 0; i < from.size(); ++i) {
    if (from[i] >= nodes || to[i] >= nodes)
      throw DataError(edge_name(i) + ": node " + std::to_string(std::max(from[i], to[i])) +
                      " is out of range (the graph has " + std::to_string(nodes) + " nodes)");
    if (!std::isfinite(length[i]) || length[i] < 0.0f)
      throw DataError(edge_name(i) + ": length " + std::to_string(length[i]) +
                      " is not a finite number >= 0");
    if (from[i] != to[i]) edges.push_back({from[i], to[i], length[i]});
  }
  // Repeated edges must agree: sort positions by the unordered pair and compare neighbours.
  std::vector<std::size_t> order(edges.size());
  for (std::size_t i = 0; i < order.size(); ++i) order[i] = i;
  auto key = [&](std::size_t i) {
    return std::pair(std::min(edges[i].from, edges[i].to), std::max(edges[i].from, edges[i].to));
  };
  std::stable_sort(order.begin(), order.end(),
                   [&](std::size_t a, std::size_t b) { return key(a) < key(b); });
  // Loops were skipped, so positions in `edges` differ from input indices; map them back.
  std::vector<std::size_t> input_index;
  input_index.reserve(edges.size());
  for (std::size_t i = 0; i < from.size(); ++i)
    if (from[i] != to[i]) input_index.push_back(i);
  for (std::size_t p = 1; p < order.size(); ++p) {
    const std::size_t a = order[p - 1], b = order[p];
    if (key(a) == key(b) && edges[a].length != edges[b].length)
      throw DataError(edge_name(input_index[a]) + " and " + edge_name(input_index[b]) +
                      " join nodes " + std::to_string(key(a).first) + " and " +
                      std::to_string(key(a).second) + " with different lengths (" +
                      std::to_string(edges[a].length) + ", " + std::to_string(edges[b].length) +
                      ")");
  }
  return detail::symmetric_csr(nodes, edges);
}

NeighbourGraph graph_from_partial_distances(std::size_t n, std::span<const float> d) {
  if (d.size() != n * n)
    throw DataError("distances: " + std::to_string(d.size()) + " entries, expected " +
                    std::to_string(n) + " x " + std::to_string(n));
  auto at = [&](std::size_t i, std::size_t j) { return d[i * n + j]; };
  auto where = [](std::size_t i, std::size_t j) {
    return "distances: row " + std::to_string(i) + ", column " + std::to_string(j);
  };
  std::vector<detail::Edge> edges;
  for (std::size_t i = 0; i < n; ++i) {
    if (!std::isnan(at(i, i)) && at(i, i) != 0.0f)
      throw DataError(where(i, i) + ": the diagonal must be 0 or missing, got " +
                      std::to_string(at(i, i)));
    for (std::size_t j = 0; j < n; ++j) {
      const float v = at(i, j);
      if (i == j || std::isnan(v)) continue;
      if (!std::isfinite(v) || v < 0.0f)
        throw DataError(where(i, j) + ": " + std::to_string(v) +
                        " is not a distance (finite, >= 0)");
      const float mirror = at(j, i);
      if (!std::isnan(mirror) && mirror != v)
        throw DataError(where(i, j) + " is " + std::to_string(v) + " but row " + std::to_string(j) +
                        ", column " + std::to_string(i) + " is " + std::to_string(mirror));
      if (j > i || std::isnan(mirror))
        edges.push_back({static_cast<NodeId>(i), static_cast<NodeId>(j), v});
    }
  }
  return detail::symmetric_csr(n, edges);
}

}  // namespace unfurl
