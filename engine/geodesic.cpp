#include "engine/geodesic.hpp"

#include <omp.h>

#include <chrono>
#include <limits>
#include <numeric>
#include <string>
#include <vector>

#include "engine/detail/dijkstra.hpp"
#include "engine/error.hpp"
#include "engine/parallel.hpp"

namespace unfurl {

namespace detail {

void throw_unreachable(std::size_t unreachable, std::size_t nodes, NodeId source) {
  throw DataError("geodesic: " + std::to_string(unreachable) + " of " + std::to_string(nodes) +
                  " graph nodes are unreachable from node " + std::to_string(source) +
                  " (the graph is not connected; keep one component before the geodesic stage)");
}

void check_graph(const NeighbourGraph& graph) {
  const std::size_t n = graph.nodes();
  if (graph.offsets.empty() || graph.offsets[0] != 0)
    throw DataError("geodesic: the graph's offsets must start with 0");
  if (graph.targets.size() != static_cast<std::size_t>(graph.offsets.back()) ||
      graph.lengths.size() != graph.targets.size())
    throw DataError("geodesic: the graph's last offset, targets and lengths disagree in size");
  for (std::size_t i = 0; i < n; ++i) {
    if (graph.offsets[i + 1] < graph.offsets[i])
      throw DataError("geodesic: graph offsets decrease at node " + std::to_string(i));
  }
  for (std::size_t e = 0; e < graph.targets.size(); ++e) {
    if (graph.targets[e] >= n)
      throw DataError("geodesic: graph edge " + std::to_string(e) + " points to node " +
                      std::to_string(graph.targets[e]) + " of " + std::to_string(n));
    if (!(graph.lengths[e] >= 0.0f) || graph.lengths[e] == std::numeric_limits<float>::infinity())
      throw DataError("geodesic: graph edge " + std::to_string(e) +
                      " has a length that is negative, infinite or NaN");
  }
}

void fill_geodesic_rows(const NeighbourGraph& graph, DistanceRows& rows, std::size_t first,
                        std::size_t count, StopToken stop) {
  const auto last = static_cast<std::ptrdiff_t>(first + count);
  ExceptionCollector errors;
#pragma omp parallel
  {
    DijkstraWorkspace work;  // one per thread, reused for all of its sources
#pragma omp for schedule(dynamic, 1)
    for (std::ptrdiff_t r = static_cast<std::ptrdiff_t>(first); r < last; ++r) {
      if (errors.failed()) continue;
      errors.run([&] {
        stop.check("geodesic");
        const NodeId source = rows.sources[static_cast<std::size_t>(r)];
        const std::size_t unreachable =
            work.run(graph, source, rows.row(static_cast<std::size_t>(r)));
        if (unreachable > 0) throw_unreachable(unreachable, graph.nodes(), source);
      });
    }
  }
  errors.rethrow();
}

}  // namespace detail

DistanceRows geodesic_rows(const NeighbourGraph& graph, std::span<const NodeId> sources,
                           StopToken stop, GeodesicSummary* summary) {
  const auto start = std::chrono::steady_clock::now();
  detail::check_graph(graph);
  const std::size_t n = graph.nodes();
  for (std::size_t r = 0; r < sources.size(); ++r) {
    if (sources[r] >= n)
      throw DataError("geodesic: source " + std::to_string(r) + " is node " +
                      std::to_string(sources[r]) + ", but the graph has " + std::to_string(n) +
                      " nodes");
  }
  DistanceRows rows;
  rows.rows = sources.size();
  rows.cols = n;
  rows.sources.assign(sources.begin(), sources.end());
  rows.values.resize(rows.rows * rows.cols);
  detail::fill_geodesic_rows(graph, rows, 0, rows.rows, stop);
  if (summary) {
    summary->sources = rows.rows;
    summary->nodes = n;
    summary->threads = omp_get_max_threads();
    summary->seconds =
        std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  }
  return rows;
}

DistanceRows all_geodesic_rows(const NeighbourGraph& graph, StopToken stop,
                               GeodesicSummary* summary) {
  std::vector<NodeId> every(graph.nodes());
  std::iota(every.begin(), every.end(), NodeId{0});
  return geodesic_rows(graph, every, stop, summary);
}

}  // namespace unfurl
