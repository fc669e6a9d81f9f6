#include "engine/detail/dijkstra.hpp"

#include <limits>

namespace unfurl::detail {

namespace {

// Dijkstra from `source` with the tentative distances in `dist`, which the caller has set
// (to +infinity for a full run, to the current landmark bounds for the maxmin update): only
// nodes whose distance drops are relaxed. `done(u)`, called on each settled node, ends the
// run early by returning true. Returns the number of nodes settled.
template <class Key, class Done>
std::size_t settle_from(const NeighbourGraph& graph, NodeId source, Key* dist,
                        DistanceHeap<Key>& heap, Done done) {
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

std::size_t DijkstraWorkspace::run(const NeighbourGraph& graph, NodeId source, float* out) {
  const std::size_t n = graph.nodes();
  std::fill(out, out + n, std::numeric_limits<float>::infinity());
  return n - settle_from(graph, source, out, heap_, [](NodeId) { return false; });
}

std::size_t DijkstraWorkspace::run_to_later(const NeighbourGraph& graph, NodeId source,
                                            std::span<const NodeId> rank, float* out) {
  const std::size_t n = graph.nodes();
  std::fill(out, out + n, std::numeric_limits<float>::infinity());
  const NodeId own = rank[source];
  std::size_t later = n - 1 - own;  // nodes ranked after the source, not settled yet
  if (later == 0) {  // the last of the sequence: every other entry comes from other runs
    out[source] = 0.0f;
    return 0;
  }
  settle_from(graph, source, out, heap_, [&](NodeId u) { return rank[u] > own && --later == 0; });
  return later;
}

std::size_t lower_bounds_from(const NeighbourGraph& graph, NodeId source,
                              std::vector<double>& bound, DistanceHeap<double>& heap) {
  return settle_from(graph, source, bound.data(), heap, [](NodeId) { return false; });
}

}  // namespace unfurl::detail
