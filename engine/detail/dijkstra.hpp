// Single-source shortest paths on the CSR neighbour graph, the kernel behind every geodesic
// stage. A DijkstraWorkspace belongs to one thread and is reused across sources, so the hot
// loop allocates nothing after the first source.
#pragma once

#include <cstddef>
#include <cstdint>
#include <vector>

#include "engine/graph.hpp"

namespace unfurl::detail {

// A binary min-heap of (tentative distance, node) with lazy deletion: a node may sit in the
// heap several times and stale entries are skipped when popped. It needs no node-to-slot
// index, so the only per-node state is the distance array.
class DistanceHeap {
 public:
  struct Entry {
    double key;
    NodeId node;
  };
  void clear() { items_.clear(); }
  bool empty() const { return items_.empty(); }
  void push(double key, NodeId node);
  Entry pop();

 private:
  std::vector<Entry> items_;
};

class DijkstraWorkspace {
 public:
  // Full single-source distances from `source` into `out` (graph.nodes() floats). Returns the
  // number of nodes left unreachable (their entries in `out` are +infinity).
  std::size_t run(const NeighbourGraph& graph, NodeId source, float* out);

 private:
  DistanceHeap heap_;
  std::vector<double> dist_;  // tentative distances in double: rounding once, at the output
};

// The maxmin update: `bound[v]` holds the distance from v to the nearest chosen landmark;
// this lowers it to min(bound[v], d(source, v)) for every v, visiting only the nodes whose
// bound actually drops. Exact because a node whose bound does not drop cannot lie on a
// shortest path to one whose bound does (bound is 1-Lipschitz along edges: the triangle
// inequality). Returns the number of nodes settled.
std::size_t lower_bounds_from(const NeighbourGraph& graph, NodeId source,
                              std::vector<double>& bound, DistanceHeap& heap);

}  // namespace unfurl::detail
