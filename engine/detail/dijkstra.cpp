#include "engine/detail/dijkstra.hpp"

#include <algorithm>
#include <limits>

namespace unfurl::detail {

namespace {
constexpr double kInfinity = std::numeric_limits<double>::infinity();

// Min-heap order for std::push_heap / std::pop_heap (which build max-heaps); ties on the key
// go to the lower node id so the settle order is fixed.
bool later(const DistanceHeap::Entry& a, const DistanceHeap::Entry& b) {
  return a.key > b.key || (a.key == b.key && a.node > b.node);
}
}  // namespace

void DistanceHeap::push(double key, NodeId node) {
  items_.push_back({key, node});
  std::push_heap(items_.begin(), items_.end(), later);
}

DistanceHeap::Entry DistanceHeap::pop() {
  std::pop_heap(items_.begin(), items_.end(), later);
  const Entry top = items_.back();
  items_.pop_back();
  return top;
}

std::size_t DijkstraWorkspace::run(const NeighbourGraph& graph, NodeId source, float* out) {
  const std::size_t n = graph.nodes();
  dist_.assign(n, kInfinity);
  heap_.clear();
  dist_[source] = 0.0;
  heap_.push(0.0, source);
  std::size_t settled = 0;
  const std::int64_t* offsets = graph.offsets.data();
  const NodeId* targets = graph.targets.data();
  const float* lengths = graph.lengths.data();
  while (!heap_.empty()) {
    const auto [d, u] = heap_.pop();
    if (d > dist_[u]) continue;  // stale entry
    ++settled;
    for (std::int64_t e = offsets[u]; e < offsets[u + 1]; ++e) {
      const NodeId v = targets[e];
      const double candidate = d + lengths[e];
      if (candidate < dist_[v]) {
        dist_[v] = candidate;
        heap_.push(candidate, v);
      }
    }
  }
  for (std::size_t i = 0; i < n; ++i) out[i] = static_cast<float>(dist_[i]);
  return n - settled;
}

std::size_t lower_bounds_from(const NeighbourGraph& graph, NodeId source,
                              std::vector<double>& bound, DistanceHeap& heap) {
  heap.clear();
  bound[source] = 0.0;
  heap.push(0.0, source);
  std::size_t settled = 0;
  while (!heap.empty()) {
    const auto [d, u] = heap.pop();
    if (d > bound[u]) continue;
    ++settled;
    for (std::int64_t e = graph.offsets[u]; e < graph.offsets[u + 1]; ++e) {
      const NodeId v = graph.targets[e];
      const double candidate = d + graph.lengths[e];
      if (candidate < bound[v]) {
        bound[v] = candidate;
        heap.push(candidate, v);
      }
    }
  }
  return settled;
}

}  // namespace unfurl::detail
