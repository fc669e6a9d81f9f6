// Geodesic distances on the neighbour graph: one Dijkstra run per source node.
//
// Threads: the sources are shared among the OpenMP threads (dynamic schedule, one source per
// chunk); each thread keeps its own heap and distance array for all of its sources. Every row
// is computed by one thread in a fixed order, so the bytes do not depend on the thread count.
#pragma once

#include <cstddef>
#include <span>
#include <variant>

#include "engine/distance_rows.hpp"
#include "engine/graph.hpp"
#include "engine/stop.hpp"

namespace unfurl {

struct EveryNode {};  // every node a source, in node order

struct GeodesicOptions {
  // The sources, one row each: listed nodes (in that order, repeats allowed; the list must
  // outlive the call), or every node, the N x N rows of exact mode.
  std::variant<std::span<const NodeId>, EveryNode> sources = std::span<const NodeId>{};
  // Throws OptionError naming the field when a listed source is not a node of the graph.
  void validate(std::size_t nodes) const;
};

struct GeodesicSummary {
  std::size_t sources = 0;  // rows computed
  std::size_t nodes = 0;    // graph nodes (columns of every row)
  double seconds = 0.0;     // wall time of the stage
  int threads = 0;          // OpenMP threads that shared the sources
};

struct GeodesicResult {
  DistanceRows rows;  // one row per source, in the order of the sources
  GeodesicSummary summary;
};

// Listed sources: one Dijkstra run per source. Every node: each pair is computed once, as
// shortest paths are symmetric on an undirected graph: the sources run in a sequence that
// sweeps the graph from one end, each run stops once every node later in the sequence is
// settled, and the rest of its row is copied from the rows of the earlier nodes (on the
// 10,000-node Swiss roll graph the runs settle 74% of what full runs would); the rows are
// exactly symmetric, and each pair's value comes from one fixed run.
// Throws OptionError for a source that is not a node, DataError when the graph is malformed
// or when some node cannot be reached from a source (the message says how many: keep one
// connected component upstream), and InterruptedError when `stop` is requested (polled
// before every source). Memory: sources x nodes float32 plus each thread's heap (8 bytes per
// entry). Distances are summed in float32 (see engine/detail/dijkstra.hpp for the measured
// rounding).
GeodesicResult geodesic_rows(const NeighbourGraph& graph, const GeodesicOptions& options,
                             StopToken stop = {});

}  // namespace unfurl
