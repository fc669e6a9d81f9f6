// Single-source shortest paths on the CSR neighbour graph, the kernel behind every geodesic
// stage. A DijkstraWorkspace belongs to one thread and is reused across sources, so the hot
// loop allocates nothing after the first source.
#pragma once

#include <algorithm>
#include <array>
#include <bit>
#include <cstddef>
#include <cstdint>
#include <span>
#include <type_traits>
#include <vector>

#include "engine/detail/delta_buckets.hpp"
#include "engine/graph.hpp"

namespace unfurl::detail {

// A monotone priority queue of (tentative distance, node): a radix heap (Ahuja, Mehlhorn,
// Orlin and Tarjan, "Faster algorithms for the shortest path problem", J. ACM 37, 1990).
// Dijkstra only ever pushes keys at least as large as the last one popped, which is all a
// radix heap needs. Non-negative IEEE floats order like their bit patterns read as unsigned
// integers, so bucket i holds the entries whose bits first differ from the last popped key's
// at bit i-1; a pop scans only the smallest non-empty bucket. Exact mode's 10,000 sources on
// the 10,000-node Swiss roll graph took 5.83 s against 6.27 s with the binary heap it
// replaced (2 threads, one run each), and the rows are the same: each node's final distance
// is the minimum over its neighbours of d(u) + w, whatever order equal keys come out in.
// Lazy deletion: a node may sit in the heap several times; the caller skips stale entries.
template <class Key>
class DistanceHeap {
  using Bits = std::conditional_t<sizeof(Key) == 4, std::uint32_t, std::uint64_t>;
  static constexpr int kBuckets = 8 * sizeof(Key) + 1;

 public:
  struct Entry {
    Key key;
    NodeId node;
  };
  void clear() {
    for (auto& b : buckets_) b.clear();
    size_ = 0;
    last_ = 0;
  }
  bool empty() const { return size_ == 0; }
  // `key` must be >= 0 and >= the key of the last pop (Dijkstra's invariant).
  void push(Key key, NodeId node) {
    buckets_[bucket_of(bits(key))].push_back({key, node});
    ++size_;
  }
  Entry pop() {
    if (buckets_[0].empty()) refill();
    const Entry top = buckets_[0].back();
    buckets_[0].pop_back();
    --size_;
    return top;
  }

 private:
  static Bits bits(Key key) {
    // +0 for -0, so that every non-negative key has the sign bit clear
    return std::bit_cast<Bits>(key + Key(0));
  }
  int bucket_of(Bits b) const {
    const Bits x = b ^ last_;
    return x == 0 ? 0 : static_cast<int>(8 * sizeof(Bits)) - std::countl_zero(x);
  }
  // Moves the smallest non-empty bucket's entries down, around its minimum, the new `last_`.
  void refill() {
    int i = 1;
    while (buckets_[i].empty()) ++i;
    auto& from = buckets_[i];
    Bits smallest = bits(from[0].key);
    for (const Entry& e : from) smallest = std::min(smallest, bits(e.key));
    last_ = smallest;
    for (const Entry& e : from) buckets_[bucket_of(bits(e.key))].push_back(e);
    from.clear();
  }
  std::array<std::vector<Entry>, kBuckets> buckets_;
  std::size_t size_ = 0;
  Bits last_ = 0;
};

// Dial's bucket queue (Dial, "Algorithm 360: shortest-path forest with topological ordering",
// Comm. ACM 12, 1969), with buckets of width delta = half the shortest edge: every edge then
// spans at least two buckets, so when a bucket comes up its entries are final, in any order,
// and the rows equal the heap's to the bit (exact() checks that this held). Live keys lie within
// the longest edge of the current one, so a ring of (longest / delta + 2) buckets, rounded up to a
// power of two, holds them all, and a bitmap finds the next non-empty bucket. On the 10,000-node
// Swiss roll graph (1,024 buckets) it ran single sources 1.7x faster than the radix heap.
class BucketQueue {
 public:
  struct Entry {
    float key;
    NodeId node;
  };
  // False (and unusable) when the lengths do not suit it: a zero shortest edge, or a ring
  // over kMaxBuckets buckets (lengths spread over more than about 5 orders of magnitude).
  bool setup(float shortest, float longest);
  void clear();
  bool empty() const { return size_ == 0; }
  void push(float key, NodeId node) {
    auto at = static_cast<std::size_t>(static_cast<double>(key) * inverse_width_);
    if (at <= current_ && popped_) {  // a relaxation that did not move a bucket on: see exact()
      exact_ = false;
      at = current_;
    }
    const std::size_t slot = at & mask_;
    ring_[slot].push_back({key, node});
    occupied_[slot >> 6] |= std::uint64_t{1} << (slot & 63);
    ++size_;
  }
  Entry pop() {  // the caller checks empty() first
    popped_ = true;
    for (;;) {
      auto& bucket = ring_[current_ & mask_];
      if (next_ < bucket.size()) {
        --size_;
        return bucket[next_++];
      }
      release(current_ & mask_);
      current_ = next_occupied(current_);
    }
  }

  // False when, since clear(), some relaxation stayed in the bucket being emptied, so that
  // bucket's entries were not all final when it came up. Float32 keys cause it once paths
  // reach about 2^24 bucket widths and adding an edge no longer moves a key by a width (a
  // node could then be settled twice); the caller redoes the run with the heap.
  bool exact() const { return exact_; }

  static constexpr std::size_t kMaxBuckets = std::size_t{1} << 18;

 private:
  void release(std::size_t slot);
  std::size_t next_occupied(std::size_t after) const;

  std::vector<std::vector<Entry>> ring_;
  std::vector<std::uint64_t> occupied_;  // a bit per bucket of the ring
  std::size_t mask_ = 0;
  double inverse_width_ = 0.0;  // double: the bucket index of a large key stays exact
  std::size_t current_ = 0;     // absolute index of the bucket being emptied
  std::size_t next_ = 0;        // its next entry
  std::size_t size_ = 0;
  bool popped_ = false;  // the source is in: pushes from here on are relaxations
  bool exact_ = true;
};

// One thread's state for many single-source runs over one graph: the queues (for full rows
// delta-stepping's buckets, engine/detail/delta_buckets.hpp; for the all-pairs shortcut Dial's
// buckets; the radix heap when the edge lengths suit neither) and nothing per source.
class DijkstraWorkspace {
 public:
  explicit DijkstraWorkspace(const NeighbourGraph& graph);

  // Full single-source distances from `source`, computed in place in `out` (graph.nodes()
  // floats). Returns the number of nodes left unreachable (their entries are +infinity).
  // Float32 throughout: 8-byte queue entries and a 4-byte distance per node run about 1.5x
  // faster than double; the price is rounding at every edge, measured at up to 1.5e-6
  // relative against double sums on the million-node Swiss roll graph (7e-7 at 10,000).
  std::size_t run(NodeId source, float* out);
  // The all-pairs shortcut: `rank` is a permutation of the nodes, and the run stops once every
  // node ranked after `source` is settled, so `out` is final for those nodes and holds
  // anything (final, tentative or +infinity) for the others, whose distances the runs from
  // them supply. Returns how many nodes ranked after `source` it could not reach.
  std::size_t run_to_later(NodeId source, std::span<const NodeId> rank, float* out);
  // Dial's buckets (true) or the radix heap (false), chosen from the graph's edge lengths.
  bool uses_buckets() const { return buckets_; }

 private:
  // One run; `make_done()` gives the run's stop rule afresh, because a bucket run that was
  // not exact is redone with the heap (and the heap kept for this graph from then on).
  template <class MakeDone>
  std::size_t settle(NodeId source, float* out, MakeDone make_done);

  const NeighbourGraph* graph_;
  bool buckets_ = false;  // Dial's buckets suit this graph's lengths
  bool delta_ = false;    // delta-stepping's buckets suit them
  BucketQueue bucket_queue_;
  DeltaBuckets delta_buckets_;
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
