#include "engine/detail/dijkstra.hpp"

#include <algorithm>
#include <bit>
#include <limits>

namespace unfurl::detail {

namespace {

// Dijkstra from `source` with the tentative distances in `dist`, which the caller has set
// (to +infinity for a full run, to the current landmark bounds for the maxmin update): only
// nodes whose distance drops are relaxed. `done(u)`, called on each settled node, ends the
// run early by returning true. Returns the number of nodes settled.
template <class Key, class Queue, class Done>
std::size_t settle_from(const NeighbourGraph& graph, NodeId source, Key* dist, Queue& heap,
                        Done done) {
  const std::int64_t* offsets = graph.offsets.data();
  const NodeId* targets = graph.targets.data();
  const float* lengths = graph.lengths.data();
  heap.clear();
  dist[source] = Key(0);
  heap.push(Key(0), source);
  std::size_t settled = 0;
  while (!heap.empty()) {
    const auto [d, u] = heap.pop();
    if (d > dist[u]) continue;  // stale entry
    ++settled;
    if (done(u)) break;
    for (std::int64_t e = offsets[u]; e < offsets[u + 1]; ++e) {
      const NodeId v = targets[e];
      const Key candidate = d + lengths[e];
      if (candidate < dist[v]) {
        dist[v] = candidate;
        heap.push(candidate, v);
      }
    }
  }
  return settled;
}

}  // namespace

bool BucketQueue::setup(float shortest, float longest) {
  if (!(shortest > 0.0f) || !(longest >= shortest)) return false;
  // Width half the shortest edge: a relaxation moves at least two buckets on, a margin that
  // float rounding of key / width (relative 2^-24 of keys up to 2^22 widths) cannot eat.
  const double width = 0.5 * static_cast<double>(shortest);
  const double span = static_cast<double>(longest) / width + 2.0;
  if (span > static_cast<double>(kMaxBuckets)) return false;
  const std::size_t size = std::bit_ceil(std::max<std::size_t>(64, static_cast<std::size_t>(span)));
  ring_.assign(size, {});
  occupied_.assign(size / 64, 0);
  mask_ = size - 1;
  inverse_width_ = 1.0 / width;
  clear();
  return true;
}

void BucketQueue::clear() {
  for (std::size_t w = 0; w < occupied_.size(); ++w)
    for (std::uint64_t bits = occupied_[w]; bits != 0; bits &= bits - 1)
      ring_[w * 64 + static_cast<std::size_t>(std::countr_zero(bits))].clear();
  std::fill(occupied_.begin(), occupied_.end(), 0);
  current_ = next_ = size_ = 0;
  popped_ = false;
  exact_ = true;
}

void BucketQueue::release(std::size_t slot) {
  ring_[slot].clear();
  occupied_[slot >> 6] &= ~(std::uint64_t{1} << (slot & 63));
  next_ = 0;
}

std::size_t BucketQueue::next_occupied(std::size_t after) const {
  return next_occupied_bucket(occupied_, mask_, after);
}

DijkstraWorkspace::DijkstraWorkspace(const NeighbourGraph& graph) : graph_(&graph) {
  if (graph.lengths.empty()) return;
  const auto [shortest, longest] = std::minmax_element(graph.lengths.begin(), graph.lengths.end());
  buckets_ = bucket_queue_.setup(*shortest, *longest);
  delta_ = delta_buckets_.setup(graph);
}

template <class MakeDone>
std::size_t DijkstraWorkspace::settle(NodeId source, float* out, MakeDone make_done) {
  const std::size_t n = graph_->nodes();
  if (buckets_) {
    std::fill(out, out + n, std::numeric_limits<float>::infinity());
    const std::size_t settled = settle_from(*graph_, source, out, bucket_queue_, make_done());
    if (bucket_queue_.exact()) return settled;
    buckets_ = false;
  }
  std::fill(out, out + n, std::numeric_limits<float>::infinity());
  return settle_from(*graph_, source, out, heap_, make_done());
}

std::size_t DijkstraWorkspace::run(NodeId source, float* out) {
  if (delta_) return graph_->nodes() - delta_buckets_.run(*graph_, source, out);
  return graph_->nodes() - settle(source, out, [] { return [](NodeId) { return false; }; });
}

std::size_t DijkstraWorkspace::run_to_later(NodeId source, std::span<const NodeId> rank,
                                            float* out) {
  const std::size_t n = graph_->nodes();
  const NodeId own = rank[source];
  if (own + 1 == n) {  // the last of the sequence: every other entry comes from other runs
    std::fill(out, out + n, std::numeric_limits<float>::infinity());
    out[source] = 0.0f;
    return 0;
  }
  if (delta_) return delta_buckets_.run_to_later(*graph_, source, rank, out);
  std::size_t later = 0;  // nodes ranked after the source, not settled yet
  settle(source, out, [&] {
    later = n - 1 - own;
    return [&](NodeId u) { return rank[u] > own && --later == 0; };
  });
  return later;
}

std::size_t lower_bounds_from(const NeighbourGraph& graph, NodeId source,
                              std::vector<double>& bound, DistanceHeap<double>& heap) {
  return settle_from(graph, source, bound.data(), heap, [](NodeId) { return false; });
}

}  // namespace unfurl::detail
