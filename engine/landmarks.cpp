#include "engine/landmarks.hpp"

#include <omp.h>

#include <algorithm>
#include <chrono>
#include <limits>
#include <numeric>

#include "engine/detail/dijkstra.hpp"
#include "engine/detail/geodesic_rows.hpp"
#include "engine/error.hpp"
#include "engine/parallel.hpp"
#include "engine/random.hpp"

namespace unfurl {

std::size_t default_landmark_count(std::size_t nodes, std::size_t dims) {
  return std::min(nodes, std::max<std::size_t>(dims + 1, 128));
}

std::size_t LandmarkOptions::resolved_count(std::size_t nodes, std::size_t dims) const {
  if (const auto* given = std::get_if<LandmarkCount>(&count)) return given->count;
  if (std::holds_alternative<AllLandmarks>(count)) return nodes;
  return default_landmark_count(nodes, dims);
}

void LandmarkOptions::validate(std::size_t nodes) const {
  if (const auto* given = std::get_if<LandmarkCount>(&count)) {
    if (given->count < 2)
      throw OptionError("LandmarkOptions.count",
                        "must be at least 2, got " + std::to_string(given->count));
    if (given->count > nodes)
      throw OptionError("LandmarkOptions.count", "must be at most the number of graph nodes, " +
                                                     std::to_string(nodes) + ", got " +
                                                     std::to_string(given->count));
  }
  if (!draw_order.empty() && draw_order.size() != nodes)
    throw InternalError("landmarks: draw_order lists " + std::to_string(draw_order.size()) +
                        " nodes of " + std::to_string(nodes));
}

namespace {

// Greedy maxmin; see the header for how the choice and the rows share the threads.
// with_rows false: the choice alone (rows.values stays empty).
void pick_maxmin(const NeighbourGraph& graph, std::uint64_t seed,
                 std::span<const NodeId> draw_order, DistanceRows& rows, LandmarkSummary& summary,
                 bool with_rows, const LandmarkHooks& hooks, StopToken stop) {
  const std::size_t n = graph.nodes();
  std::vector<double> nearest(n, std::numeric_limits<double>::infinity());
  std::vector<char> chosen(n, 0);
  detail::DistanceHeap<double> heap;
  std::vector<detail::DijkstraWorkspace> work(
      with_rows ? static_cast<std::size_t>(omp_get_max_threads()) : 0,
      detail::DijkstraWorkspace(graph));
  Random rng(seed);
  ExceptionCollector errors;
#pragma omp parallel
#pragma omp single
  {
    for (std::size_t k = 0; k < rows.rows && !errors.failed(); ++k) {
      NodeId pick = 0;
      errors.run([&] {
        stop.check("landmarks");
        if (k == 0) {
          const auto drawn = static_cast<NodeId>(rng.below(n));
          pick = draw_order.empty() ? drawn : draw_order[drawn];
          return;
        }
        double farthest = -1.0;
        for (std::size_t i = 0; i < n; ++i) {
          if (!chosen[i] && nearest[i] > farthest) {  // strict: ties keep the lowest id
            farthest = nearest[i];
            pick = static_cast<NodeId>(i);
          }
        }
        if (farthest == 0.0)
          summary.warnings.push_back("landmarks: landmark " + std::to_string(k) + " (node " +
                                     std::to_string(pick) +
                                     ") is at distance 0 from an earlier one: duplicate points");
      });
      if (errors.failed()) break;
      chosen[pick] = 1;
      rows.sources[k] = pick;
      if (with_rows) {
#pragma omp task default(none) firstprivate(k, pick) shared(rows, graph, work, errors, stop, hooks)
        errors.run([&] {
          if (errors.failed()) return;
          stop.check("landmarks");
          auto& mine = work[static_cast<std::size_t>(omp_get_thread_num())];
          const std::size_t unreachable = mine.run(pick, rows.row(k));
          if (unreachable > 0) detail::throw_unreachable(unreachable, graph.nodes(), pick);
          stop.advance(1);
          if (hooks.row_done) hooks.row_done(rows, k);
        });
      }
      errors.run([&] {
        summary.choice_visits += detail::lower_bounds_from(graph, pick, nearest, heap);
        if (k > 0) return;
        const auto unreachable = static_cast<std::size_t>(
            std::count(nearest.begin(), nearest.end(), std::numeric_limits<double>::infinity()));
        if (unreachable > 0) detail::throw_unreachable(unreachable, n, pick);
      });
    }
    if (!errors.failed())
      errors.run([&] {  // before the last rows are done: a caller may save the choice now
        summary.coverage_radius = *std::max_element(nearest.begin(), nearest.end());
        if (hooks.chosen) hooks.chosen(rows, summary);
      });
#pragma omp taskwait
  }
  errors.rethrow();
}

void pick_random(const NeighbourGraph& graph, std::uint64_t seed,
                 std::span<const NodeId> draw_order, DistanceRows& rows,
                 const LandmarkSummary& summary, bool with_rows, const LandmarkHooks& hooks,
                 StopToken stop) {
  // Partial Fisher-Yates shuffle: the first L entries are a uniform draw without repeats.
  std::vector<NodeId> ids(graph.nodes());
  if (draw_order.empty())
    std::iota(ids.begin(), ids.end(), NodeId{0});
  else
    ids.assign(draw_order.begin(), draw_order.end());
  Random rng(seed);
  for (std::size_t k = 0; k < rows.rows; ++k) {
    const std::size_t j = k + static_cast<std::size_t>(rng.below(ids.size() - k));
    std::swap(ids[k], ids[j]);
    rows.sources[k] = ids[k];
  }
  if (hooks.chosen) hooks.chosen(rows, summary);
  if (!with_rows) return;
  detail::fill_geodesic_rows(graph, rows, 0, rows.rows, stop);
  if (hooks.row_done)
    for (std::size_t k = 0; k < rows.rows; ++k) hooks.row_done(rows, k);
}

void landmarks_of(const NeighbourGraph& graph, const LandmarkOptions& options, bool with_rows,
                  const LandmarkHooks& hooks, StopToken stop, LandmarkResult& result) {
  const auto start = std::chrono::steady_clock::now();
  const std::size_t n = graph.nodes();
  options.validate(n);
  detail::check_graph(graph);
  DistanceRows& rows = result.rows;
  rows.rows = options.resolved_count(n);
  rows.cols = n;
  rows.sources.assign(rows.rows, 0);
  if (with_rows) rows.values.resize(rows.rows * rows.cols);
  LandmarkSummary& summary = result.summary;
  summary.landmarks = rows.rows;
  summary.nodes = n;
  summary.pick = options.pick;
  summary.threads = omp_get_max_threads();
  if (options.pick == Pick::maxmin)
    pick_maxmin(graph, options.seed, options.draw_order, rows, summary, with_rows, hooks, stop);
  else
    pick_random(graph, options.seed, options.draw_order, rows, summary, with_rows, hooks, stop);
  summary.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
}

}  // namespace

LandmarkResult pick_landmarks(const NeighbourGraph& graph, const LandmarkOptions& options,
                              StopToken stop) {
  LandmarkResult result;
  landmarks_of(graph, options, true, {}, stop, result);
  return result;
}

void pick_landmarks_into(const NeighbourGraph& graph, const LandmarkOptions& options,
                         LandmarkResult& result, const LandmarkHooks& hooks, StopToken stop) {
  result = LandmarkResult{};
  landmarks_of(graph, options, true, hooks, stop, result);
}

LandmarkResult choose_landmarks(const NeighbourGraph& graph, const LandmarkOptions& options,
                                StopToken stop) {
  LandmarkResult result;
  landmarks_of(graph, options, false, {}, stop, result);
  return result;
}

void fill_landmark_rows(const NeighbourGraph& graph, DistanceRows& rows, std::size_t first,
                        std::size_t count, StopToken stop) {
  if (rows.values.size() != rows.rows * rows.cols || rows.cols != graph.nodes() ||
      first + count > rows.rows || rows.sources.size() != rows.rows)
    throw InternalError("fill_landmark_rows: rows and graph disagree in shape");
  detail::fill_geodesic_rows(graph, rows, first, count, stop);
}

}  // namespace unfurl
