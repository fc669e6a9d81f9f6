// Single-source shortest paths on the CSR neighbour graph, the kernel behind every geodesic
// stage. A DijkstraWorkspace belongs to one thread and is reused across sources, so the hot
// loop allocates nothing after the first source.
#pragma once

#include <algorithm>
#include <cstddef>
#include <cstdint>
#include <vector>

#include "engine/graph.hpp"

namespace unfurl::detail {

// A binary min-heap of (tentative distance, node) with lazy deletion: a node may sit in the
// heap several times and stale entries are skipped when popped. It needs no node-to-slot
// index, so the only per-node state is the distance array. (A 4-ary heap measured no faster
// on the million-node Swiss roll graph.) A run is sequential, so ties need no rule for the
// result to be reproducible.
template <class Key>
class DistanceHeap {
 public:
  struct Entry {
    Key key;
    NodeId node;
  };
  void clear() { items_.clear(); }
  bool empty() const { return items_.empty(); }
  void push(Key key, NodeId node) {
    items_.push_back({key, node});
    std::push_heap(items_.begin(), items_.end(), Later{});
  }
  Entry pop() {
    std::pop_heap(items_.begin(), items_.end(), Later{});
    const Entry top = items_.back();
    items_.pop_back();
    return top;
  }

 private:
  struct Later {  // a function object, not a function pointer, so the heap code inlines it
    bool operator()(const Entry& a, const Entry& b) const { return a.key > b.key; }
  };
  std::vector<Entry> items_;
};

class DijkstraWorkspace {
 public:
  // Full single-source distances from `source`, computed in place in `out` (graph.nodes()
  // floats). Returns the number of nodes left unreachable (their entries are +infinity).
  // Float32 throughout: 8-byte heap entries and a 4-byte distance per node run about 1.5x
  // faster than double; the price is rounding at every edge, measured at up to 1.5e-6
  // relative against double sums on the million-node Swiss roll graph (7e-7 at 10,000).
  std::size_t run(const NeighbourGraph& graph, NodeId source, float* out);

 private:
  DistanceHeap<float> heap_;
};

// The maxmin update: `bound[v]` holds the distance from v to the nearest chosen landmark;
// this lowers it to min(bound[v], d(source, v)) for every v, visiting only the nodes whose
// bound actually drops. Exact because a node whose bound does not drop cannot lie on a
// shortest path to one whose bound does (bound is 1-Lipschitz along edges: the triangle
// inequality). Returns the number of nodes settled.
std::size_t lower_bounds_from(const NeighbourGraph& graph, NodeId source,
                              std::vector<double>& bound, DistanceHeap<double>& heap);

}  // namespace unfurl::detail
