#include "engine/geodesic.hpp"

#include <omp.h>

#include <algorithm>
#include <chrono>
#include <cstdio>
#include <limits>
#include <numeric>
#include <string>
#include <vector>

#include "engine/detail/dijkstra.hpp"
#include "engine/detail/geodesic_rows.hpp"
#include "engine/detail/parallel_chunks.hpp"
#include "engine/detail/upper_tiles.hpp"
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
  // Edges in fixed chunks on all threads (at 10M points 114M edges, checked before every
  // geodesic stage): each chunk keeps its first bad edge and its own longest and total, joined
  // in chunk order, so the message and the bound do not depend on the thread count.
  constexpr std::size_t kChunk = std::size_t{1} << 20;
  const std::size_t edges = graph.targets.size();
  const std::size_t chunks = (edges + kChunk - 1) / kChunk;
  std::vector<std::size_t> first_bad(chunks, edges);
  std::vector<double> chunk_longest(chunks, 0.0), chunk_total(chunks, 0.0);
  detail::parallel_chunks(edges, kChunk, {}, "geodesic", [&](std::size_t b, std::size_t e) {
    const std::size_t c = b / kChunk;
    double longest = 0, total = 0;
    for (std::size_t i = b; i < e; ++i) {
      const float length = graph.lengths[i];
      if (graph.targets[i] >= n || !(length >= 0.0f) ||
          length == std::numeric_limits<float>::infinity()) {
        first_bad[c] = i;
        return;
      }
      longest = std::max(longest, static_cast<double>(length));
      total += length;
    }
    chunk_longest[c] = longest;
    chunk_total[c] = total;
  });
  double longest = 0, total = 0;
  for (std::size_t c = 0; c < chunks; ++c) {
    if (const std::size_t e = first_bad[c]; e < edges) {
      if (graph.targets[e] >= n)
        throw DataError("geodesic: graph edge " + std::to_string(e) + " points to node " +
                        std::to_string(graph.targets[e]) + " of " + std::to_string(n));
      throw DataError("geodesic: graph edge " + std::to_string(e) +
                      " has a length that is negative, infinite or NaN");
    }
    longest = std::max(longest, chunk_longest[c]);
    total += chunk_total[c];
  }
  // Path lengths are float32 sums. A shortest path has at most N - 1 edges and uses each
  // edge once (every edge is stored twice), so it is at most the smaller of these bounds; past
  // float32's largest value a sum becomes infinite and a reachable node would look unreachable.
  const double bound = std::min(longest * static_cast<double>(n > 0 ? n - 1 : 0), total / 2);
  if (bound > static_cast<double>(std::numeric_limits<float>::max())) {
    char text[256];
    std::snprintf(text, sizeof text,
                  "geodesic: path lengths could reach %.3g (longest edge %.3g, %zu nodes), "
                  "beyond float32's range (%.3g); scale the values down (for example "
                  "PreprocessOptions.scale standard)",
                  bound, longest, n, static_cast<double>(std::numeric_limits<float>::max()));
    throw DataError(text);
  }
}

namespace {

// Calls body(work, i) for i in [first, last), shared among the threads (dynamic schedule,
// one at a time), each thread with its own workspace for all of its calls; polls `stop`
// before each and rethrows the first exception after the loop.
template <class Body>
void for_each_run(const NeighbourGraph& graph, std::size_t first, std::size_t last, StopToken stop,
                  Body&& body) {
  ExceptionCollector errors;
#pragma omp parallel
  {
    DijkstraWorkspace work(graph);
#pragma omp for schedule(dynamic, 1)
    for (auto i = static_cast<std::ptrdiff_t>(first); i < static_cast<std::ptrdiff_t>(last); ++i) {
      if (errors.failed()) continue;
      errors.run([&] {
        stop.check("geodesic");
        body(work, static_cast<std::size_t>(i));
        stop.advance(1);
      });
    }
  }
  errors.rethrow();
}

}  // namespace

void fill_geodesic_rows(const NeighbourGraph& graph, DistanceRows& rows, std::size_t first,
                        std::size_t count, StopToken stop) {
  for_each_run(graph, first, first + count, stop, [&](DijkstraWorkspace& work, std::size_t r) {
    const NodeId source = rows.sources[r];
    const std::size_t unreachable = work.run(source, rows.row(r));
    if (unreachable > 0) throw_unreachable(unreachable, graph.nodes(), source);
  });
}

}  // namespace detail

namespace {

// Row i, column j gets D_ij computed by the run of whichever of i, j comes first in the
// sequence (that run settled the other); the pair's other entry is overwritten by it.
void mirror_by_rank(DistanceRows& rows, std::span<const NodeId> rank) {
  detail::for_upper_pairs_tiled(rows.cols, [&](std::size_t i, std::size_t j) {
    float& ij = rows.row(i)[j];
    float& ji = rows.row(j)[i];
    if (rank[i] < rank[j])
      ji = ij;
    else
      ij = ji;
  });
}

// The order in which exact mode runs its sources: by geodesic distance from a far node (the
// node farthest from node 0), nearest first, ties by id. A run stops once every later node
// is settled, so the sequence sweeps the graph from one end: on the 10,000-node Swiss roll
// graph the runs then reach 74% of the N x N entries (a breadth-first order did as well; the
// Morton node order itself, 95%). Also checks that the graph is connected, with one message
// whatever the thread count.
std::vector<NodeId> sweep_sequence(const NeighbourGraph& graph) {
  const std::size_t n = graph.nodes();
  std::vector<float> from(n);
  detail::DijkstraWorkspace work(graph);
  if (const std::size_t unreachable = work.run(0, from.data()); unreachable > 0)
    detail::throw_unreachable(unreachable, n, 0);
  const auto far = static_cast<NodeId>(std::max_element(from.begin(), from.end()) - from.begin());
  work.run(far, from.data());
  std::vector<NodeId> sequence(n);
  std::iota(sequence.begin(), sequence.end(), NodeId{0});
  std::sort(sequence.begin(), sequence.end(),
            [&](NodeId x, NodeId y) { return from[x] < from[y] || (from[x] == from[y] && x < y); });
  return sequence;
}

// Every node a source (see the header): each pair computed once, then mirrored.
DistanceRows every_node_rows(const NeighbourGraph& graph, StopToken stop) {
  const std::size_t n = graph.nodes();
  if (n == 0) return {};
  const std::vector<NodeId> sequence = sweep_sequence(graph);
  std::vector<NodeId> rank(n);
  for (std::size_t p = 0; p < n; ++p) rank[sequence[p]] = static_cast<NodeId>(p);
  DistanceRows rows;
  rows.rows = n;
  rows.cols = n;
  rows.sources.resize(n);
  std::iota(rows.sources.begin(), rows.sources.end(), NodeId{0});
  rows.values.resize(n * n);
  detail::for_each_run(graph, 0, n, stop, [&](detail::DijkstraWorkspace& work, std::size_t p) {
    const NodeId source = sequence[p];
    // sweep_sequence found the graph connected, so every run reaches all later nodes
    if (work.run_to_later(source, rank, rows.row(source)) > 0)
      throw InternalError("geodesic: a run from node " + std::to_string(source) +
                          " missed nodes of a connected graph");
  });
  mirror_by_rank(rows, rank);
  return rows;
}

DistanceRows listed_rows(const NeighbourGraph& graph, std::span<const NodeId> sources,
                         StopToken stop) {
  DistanceRows rows;
  rows.rows = sources.size();
  rows.cols = graph.nodes();
  rows.sources.assign(sources.begin(), sources.end());
  rows.values.resize(rows.rows * rows.cols);
  detail::fill_geodesic_rows(graph, rows, 0, rows.rows, stop);
  return rows;
}

}  // namespace

void GeodesicOptions::validate(std::size_t nodes) const {
  const auto* listed = std::get_if<std::span<const NodeId>>(&sources);
  if (!listed) return;
  for (std::size_t r = 0; r < listed->size(); ++r)
    if ((*listed)[r] >= nodes)
      throw OptionError("GeodesicOptions.sources",
                        "source " + std::to_string(r) + " is node " + std::to_string((*listed)[r]) +
                            ", but the graph has " + std::to_string(nodes) + " nodes");
}

GeodesicResult geodesic_rows(const NeighbourGraph& graph, const GeodesicOptions& options,
                             StopToken stop) {
  const auto start = std::chrono::steady_clock::now();
  detail::check_graph(graph);
  options.validate(graph.nodes());
  GeodesicResult result;
  const auto* listed = std::get_if<std::span<const NodeId>>(&options.sources);
  result.rows = listed ? listed_rows(graph, *listed, stop) : every_node_rows(graph, stop);
  GeodesicSummary& s = result.summary;
  s.sources = result.rows.rows;
  s.nodes = graph.nodes();
  s.threads = omp_get_max_threads();
  s.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  return result;
}

}  // namespace unfurl
