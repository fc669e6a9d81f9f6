#include "engine/detail/delta_buckets.hpp"

#include <algorithm>
#include <bit>
#include <limits>

namespace unfurl::detail {

namespace {

// The width, as a fraction of a low quantile of the edge lengths (taken on an evenly spaced
// sample of at most 65,536 edges, so it costs nothing next to one run). Measured on the
// million-node Swiss roll graph, a half, a quarter, one and two times the quartile ran within
// 10% of each other (bench/RESULTS.md, "Speed lane, second session").
constexpr double kWidthQuantile = 0.25;
constexpr double kWidthFraction = 0.5;
// Entries ahead of the one being scanned whose graph data are prefetched: the node's offsets
// and distance at kAhead, its edges at kAhead / 2 (by then its offsets are in cache). Its
// neighbours' distances are not: reading the targets to prefetch them (at kAhead / 4) stalled
// on edges not yet in cache, and dropping that stage cut a full row's CPU time on the
// million-node Swiss roll graph to 0.72-0.76 of it (bench/RESULTS.md, lane rows).
constexpr std::size_t kAhead = 16;
// Relaxations staged before their pushes (a node of higher degree goes in several rounds).
constexpr std::size_t kStaged = 64;

double low_quantile(const std::vector<float>& lengths) {
  const std::size_t stride = std::max<std::size_t>(1, lengths.size() / 65536);
  std::vector<float> sample;
  for (std::size_t e = 0; e < lengths.size(); e += stride) sample.push_back(lengths[e]);
  const auto at = static_cast<std::size_t>(kWidthQuantile * static_cast<double>(sample.size() - 1));
  std::nth_element(sample.begin(), sample.begin() + static_cast<std::ptrdiff_t>(at), sample.end());
  return sample[at];
}

}  // namespace

bool DeltaBuckets::setup(const NeighbourGraph& graph) {
  ring_.clear();
  if (graph.lengths.empty()) return false;
  const double longest = *std::max_element(graph.lengths.begin(), graph.lengths.end());
  // A width so small against the longest edge that the ring would exceed kMaxBuckets (a few
  // very long edges, or a quarter of the edges of length 0) leaves the graph to the other
  // queues: a wider bucket would rescan nodes without bound.
  const double width = kWidthFraction * low_quantile(graph.lengths);
  if (!(width > 0.0) || !(longest / width + 4.0 <= static_cast<double>(kMaxBuckets))) return false;
  // Live keys lie within the longest edge (plus one bucket) of the bucket being emptied; a
  // margin of four buckets covers the rounding of key / width.
  const double span = longest / width + 4.0;
  const std::size_t size = std::bit_ceil(std::max<std::size_t>(64, static_cast<std::size_t>(span)));
  ring_.assign(size, {});
  occupied_.assign(size / 64, 0);
  mask_ = size - 1;
  width_ = width;
  inverse_width_ = 1.0 / width;
  return true;
}

// Inlined into the scan by force: left to itself GCC kept it a call (its vector growth path
// is large), about 5% of a row's time at 1M nodes (bench/RESULTS.md, lane dijkstra).
[[gnu::always_inline]] inline void DeltaBuckets::push(float key, NodeId node) {
  // A key a rounding below the bucket being emptied goes into it: order inside a bucket
  // does not matter (see the header).
  const std::size_t at =
      std::max(current_, static_cast<std::size_t>(static_cast<double>(key) * inverse_width_));
  const std::size_t slot = at & mask_;
  ring_[slot].push_back({key, node});
  occupied_[slot >> 6] |= std::uint64_t{1} << (slot & 63);
  ++size_;
}

std::size_t next_occupied_bucket(std::span<const std::uint64_t> occupied, std::size_t mask,
                                 std::size_t after) {
  const std::size_t from = (after + 1) & mask;
  std::size_t word = from >> 6;
  std::uint64_t bits = occupied[word] & (~std::uint64_t{0} << (from & 63));
  for (std::size_t step = 0; step <= occupied.size(); ++step) {
    if (bits != 0) {
      const std::size_t slot = word * 64 + static_cast<std::size_t>(std::countr_zero(bits));
      return after + 1 + ((slot - from) & mask);
    }
    word = (word + 1) % occupied.size();
    bits = occupied[word];
  }
  return after + 1;  // not reached while the ring holds an entry
}

void DeltaBuckets::clear() {
  for (std::size_t w = 0; w < occupied_.size(); ++w) {
    for (std::uint64_t bits = occupied_[w]; bits != 0; bits &= bits - 1)
      ring_[w * 64 + static_cast<std::size_t>(std::countr_zero(bits))].clear();
    occupied_[w] = 0;
  }
  current_ = 0;
  size_ = 0;
}

// One run: on_scan(u) for every scan of a node (a node can be scanned more than once), and
// the run ends early when finished() holds after a bucket is emptied.
template <class OnScan, class Finished>
void DeltaBuckets::sweep(const NeighbourGraph& graph, NodeId source, float* dist, OnScan on_scan,
                         Finished finished) {
  const std::size_t n = graph.nodes();
  const std::int64_t* offsets = graph.offsets.data();
  const NodeId* targets = graph.targets.data();
  const float* lengths = graph.lengths.data();
  std::fill(dist, dist + n, std::numeric_limits<float>::infinity());
  Entry staged[kStaged];
  clear();
  dist[source] = 0.0f;
  push(0.0f, source);
  for (;;) {
    const std::size_t slot = current_ & mask_;
    std::vector<Entry>& bucket = ring_[slot];
    // The bucket grows while it is scanned (short edges, rescans): index, never iterate.
    for (std::size_t i = 0; i < bucket.size(); ++i) {
      if (i + kAhead < bucket.size()) {
        const NodeId ahead = bucket[i + kAhead].node;
        __builtin_prefetch(offsets + ahead);
        __builtin_prefetch(dist + ahead);
      }
      if (i + kAhead / 2 < bucket.size()) {
        const NodeId ahead = bucket[i + kAhead / 2].node;
        const std::int64_t e = offsets[ahead], last = std::max(e, offsets[ahead + 1] - 1);
        __builtin_prefetch(targets + e);
        __builtin_prefetch(lengths + e);
        __builtin_prefetch(targets + last);
        __builtin_prefetch(lengths + last);
      }
      const Entry entry = bucket[i];
      const NodeId u = entry.node;
      if (entry.key > dist[u]) continue;  // superseded by a shorter path
      on_scan(u);
      // Relaxed without a branch per edge (about 1 in 7 tries lowers a distance, a branch
      // the processor cannot predict): every try stores the smaller value and writes its
      // entry to `staged`, kept only when it lowered the distance; then the kept ones are
      // pushed in edge order, as a branch per edge would have pushed them.
      const std::int64_t end = offsets[u + 1];
      for (std::int64_t e = offsets[u]; e < end;) {
        const std::int64_t stop = std::min(end, e + static_cast<std::int64_t>(kStaged));
        std::size_t kept = 0;
        for (; e < stop; ++e) {
          const NodeId v = targets[e];
          const float candidate = entry.key + lengths[e];
          const float before = dist[v];
          const bool lower = candidate < before;
          dist[v] = lower ? candidate : before;
          staged[kept] = {candidate, v};
          kept += lower;
        }
        for (std::size_t j = 0; j < kept; ++j) push(staged[j].key, staged[j].node);
      }
    }
    size_ -= bucket.size();
    bucket.clear();
    occupied_[slot >> 6] &= ~(std::uint64_t{1} << (slot & 63));
    if (size_ == 0 || finished()) return;
    current_ = next_occupied_bucket(occupied_, mask_, current_);
  }
}

std::size_t DeltaBuckets::run(const NeighbourGraph& graph, NodeId source, float* dist) {
  sweep(
      graph, source, dist, [](NodeId) {}, [] { return false; });
  const std::size_t n = graph.nodes();
  std::size_t reached = 0;
  for (std::size_t v = 0; v < n; ++v) reached += dist[v] != std::numeric_limits<float>::infinity();
  return reached;
}

std::size_t DeltaBuckets::run_to_later(const NeighbourGraph& graph, NodeId source,
                                       std::span<const NodeId> rank, float* dist) {
  const std::size_t n = graph.nodes();
  if (scanned_.size() != n || stamp_ == std::numeric_limits<std::uint32_t>::max()) {
    scanned_.assign(n, 0);
    stamp_ = 0;
  }
  const std::uint32_t stamp = ++stamp_;
  const NodeId own = rank[source];
  std::size_t later = n - 1 - own;
  sweep(
      graph, source, dist,
      [&](NodeId u) {
        if (scanned_[u] == stamp) return;
        scanned_[u] = stamp;
        later -= rank[u] > own;
      },
      [&] { return later == 0; });
  return later;
}

}  // namespace unfurl::detail
