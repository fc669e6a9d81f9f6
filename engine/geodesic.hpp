// Geodesic distances on the neighbour graph: one Dijkstra run per source node.
//
// Threads: the sources are shared among the OpenMP threads (dynamic schedule, one source per
// chunk); each thread keeps its own heap and distance array for all of its sources. Every row
// is computed by one thread in a fixed order, so the bytes do not depend on the thread count.
#pragma once

#include <cstddef>
#include <span>

#include "engine/distance_rows.hpp"
#include "engine/graph.hpp"
#include "engine/stop.hpp"

namespace unfurl {

struct GeodesicSummary {
  std::size_t sources = 0;  // rows computed
  std::size_t nodes = 0;    // graph nodes (columns of every row)
  double seconds = 0.0;     // wall time of the stage
  int threads = 0;          // OpenMP threads that shared the sources
};

// Distances from every node in `sources` (in that order; repeats allowed) to every node.
// Throws DataError when the graph is malformed, when a source id is out of range or when some node
// cannot be reached from a source (the message says how many: keep one connected component
// upstream), and InterruptedError when `stop` is requested (polled before every source). Memory:
// sources.size() x nodes float32 plus each thread's heap (8 bytes per entry). Distances are
// summed in float32 (see engine/detail/dijkstra.hpp for the measured rounding).
DistanceRows geodesic_rows(const NeighbourGraph& graph, std::span<const NodeId> sources,
                           StopToken stop = {}, GeodesicSummary* summary = nullptr);

// Every node a source, in node order: the N x N rows of exact mode, exactly symmetric.
// Shortest paths are symmetric on an undirected graph, so each pair is computed once: the
// sources run in a sequence that sweeps the graph from one end, each run stops once every
// node later in the sequence is settled, and the rest of its row is copied from the rows of
// the earlier nodes. On the 10,000-node Swiss roll graph the runs settle 74% of what full
// runs would. Each pair's value comes from one fixed run: no thread-count dependence.
DistanceRows all_geodesic_rows(const NeighbourGraph& graph, StopToken stop = {},
                               GeodesicSummary* summary = nullptr);

namespace detail {
// Fills rows [first, first + count) of `rows` (whose sources and shape are already set).
// Shared by geodesic_rows and the landmark picker, which computes its rows in steps.
void fill_geodesic_rows(const NeighbourGraph& graph, DistanceRows& rows, std::size_t first,
                        std::size_t count, StopToken stop);
// Throws DataError unless the CSR arrays are consistent, every target is a node and every
// length is finite and >= 0 (a malformed graph must not crash Dijkstra).
void check_graph(const NeighbourGraph& graph);
// The error raised when `unreachable` nodes cannot be reached from `source`.
[[noreturn]] void throw_unreachable(std::size_t unreachable, std::size_t nodes, NodeId source);
}  // namespace detail

}  // namespace unfurl
