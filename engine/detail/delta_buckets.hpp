// Full single-source rows by buckets of a width chosen from the edge lengths, label-correcting
// inside a bucket: the sequential form of delta-stepping (Meyer and Sanders, "Delta-stepping:
// a parallelizable shortest path algorithm", J. Algorithms 49, 2003).
//
// Why not Dial's buckets (engine/detail/dijkstra.hpp) for these runs: their width is half the
// shortest edge, so that a bucket's entries are final in any order. On the million-node Swiss
// roll graph the shortest edge is 1,000x shorter than the median, so nearly every bucket
// holds zero or one entry and a run walks millions of them. Here a bucket is a fraction of a
// typical edge wide: a few thousand buckets per run, hundreds of entries each, read in order,
// so the graph data of the entries coming up can be prefetched. Measured on a loaded machine
// (bench/RESULTS.md, "Speed lane, second session"): 0.88 to 0.91 of Dial's CPU time per full
// row on that graph, 0.79 to 0.83 of exact mode's geodesic stage at N = 10,000.
//
// Exactness: an edge shorter than the width may lower a node of the bucket being emptied
// after that node was scanned; the node then goes back into the same bucket and is scanned
// again (label-correcting), so when a bucket is empty every node in it is final. A node is
// scanned last with its final distance, so at the end dist[v] <= fl(dist[u] + w) holds for
// every edge, and every dist[v] is the float32 sum along some path: dist[v] is the minimum
// over paths of the path's float32 sum taken from the source outwards (float addition is
// monotone), which is exactly what Dijkstra with any exact priority queue computes. The rows
// equal the heap's to the bit (tests/engine/delta_buckets_test.cpp checks this against a
// textbook binary-heap Dijkstra), whatever order a bucket's entries come in.
#pragma once

#include <cstddef>
#include <cstdint>
#include <span>
#include <vector>

#include "engine/graph.hpp"

namespace unfurl::detail {

// A ring of buckets with a bit per bucket in `occupied` (ring size mask + 1, a power of two):
// the absolute index of the first occupied bucket after `after`. Every live key lies less
// than a ring's length ahead, so the first set bit going round from there is it.
std::size_t next_occupied_bucket(std::span<const std::uint64_t> occupied, std::size_t mask,
                                 std::size_t after);

class DeltaBuckets {
 public:
  // False (and unusable) when the graph's lengths give no positive width (a quarter of the
  // edges of length 0), or when the longest edge would need a ring over kMaxBuckets buckets.
  bool setup(const NeighbourGraph& graph);
  // Full distances from `source` into `dist` (graph.nodes() floats, overwritten). Returns the
  // number of nodes reached, the source included.
  std::size_t run(const NeighbourGraph& graph, NodeId source, float* dist);
  // The all-pairs shortcut (DijkstraWorkspace::run_to_later): stops at the end of the first
  // bucket by which every node ranked after `source` has been scanned (a node scanned in an
  // emptied bucket is final). Returns how many such nodes it could not reach.
  std::size_t run_to_later(const NeighbourGraph& graph, NodeId source, std::span<const NodeId> rank,
                           float* dist);
  double width() const { return width_; }

  static constexpr std::size_t kMaxBuckets = std::size_t{1} << 16;

 private:
  struct Entry {
    float key;
    NodeId node;
  };
  template <class OnScan, class Finished>
  void sweep(const NeighbourGraph& graph, NodeId source, float* dist, OnScan on_scan,
             Finished finished);
  void push(float key, NodeId node);
  void clear();

  std::vector<std::vector<Entry>> ring_;
  std::vector<std::uint64_t> occupied_;  // a bit per bucket of the ring
  std::size_t mask_ = 0;
  double width_ = 0.0;
  double inverse_width_ = 0.0;          // double: the bucket index of a large key stays exact
  std::size_t current_ = 0;             // absolute index of the bucket being emptied
  std::size_t size_ = 0;                // entries in the ring
  std::vector<std::uint32_t> scanned_;  // run_to_later: the stamp of the run that scanned a node
  std::uint32_t stamp_ = 0;
};

}  // namespace unfurl::detail
