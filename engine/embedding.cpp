#include "engine/embedding.hpp"

#include <algorithm>
#include <atomic>
#include <exception>
#include <future>
#include <memory>
#include <mutex>

#include "engine/embedding_steps.hpp"
#include "engine/error.hpp"
#include "engine/step_store.hpp"
#include "engine/timer.hpp"

namespace unfurl {
namespace {

// With a step store the landmark rows are computed and saved in this many batches: a stop
// loses at most one batch, and each batch is one file of L / 16 rows.
constexpr std::size_t kRowBatches = 16;

void append_warnings(std::vector<std::string>& to, const char* stage,
                     const std::vector<std::string>& from) {
  for (const auto& w : from) to.push_back(std::string(stage) + ": " + w);
}

// The landmark count on `nodes` nodes: at least dims + 1, which landmark MDS needs.
std::size_t landmark_count(const EmbedOptions& options, std::size_t nodes) {
  const std::size_t dims = options.spectral.dims;
  if (dims < 1) throw OptionError("SpectralOptions.dims", "must be at least 1, got 0");
  const std::size_t l = options.landmarks.resolved_count(nodes, dims);
  if (l < dims + 1)
    throw OptionError("LandmarkOptions.count",
                      "must be at least SpectralOptions.dims + 1 = " + std::to_string(dims + 1) +
                          ", got " + std::to_string(l) +
                          (std::holds_alternative<AutomaticLandmarks>(options.landmarks.count)
                               ? " (the graph has only " + std::to_string(nodes) + " nodes)"
                               : std::string()));
  return l;
}

// The first row of each batch: batch b holds rows [first[b], first[b + 1]).
std::vector<std::size_t> batch_starts(std::size_t rows) {
  const std::size_t per_batch = (rows + kRowBatches - 1) / kRowBatches;
  std::vector<std::size_t> first;
  for (std::size_t f = 0; f < rows; f += per_batch) first.push_back(f);
  first.push_back(rows);
  return first;
}

// Maxmin with nothing saved: the rows are computed beside the choice, as source_rows does,
// and saved as they come: the choice as soon as it is made, each batch once all its rows are
// done (batches finish in any order; those done before the choice wait for it, so that a
// saved batch always has its choice). Calls to the store come from the thread that finished
// the work, one at a time under `saving`.
void rows_beside_choice(const NeighbourGraph& ordered, const LandmarkOptions& lo, StepStore& store,
                        LandmarkResult& picked, StopToken stop) {
  const std::vector<std::size_t> first = batch_starts(lo.resolved_count(ordered.nodes()));
  const std::size_t batches = first.size() - 1;
  std::vector<std::size_t> batch_of(first.back());
  for (std::size_t b = 0; b < batches; ++b)
    std::fill(batch_of.begin() + first[b], batch_of.begin() + first[b + 1], b);
  std::unique_ptr<std::atomic<std::size_t>[]> left(new std::atomic<std::size_t>[batches]);
  for (std::size_t b = 0; b < batches; ++b) left[b] = first[b + 1] - first[b];
  std::mutex saving;
  bool chosen = false;
  std::vector<std::size_t> waiting;  // batches done before the choice was saved
  LandmarkHooks hooks;
  hooks.chosen = [&](const DistanceRows& rows, const LandmarkSummary& summary) {
    LandmarkResult choice;
    choice.rows.rows = rows.rows;
    choice.rows.cols = rows.cols;
    choice.rows.sources = rows.sources;
    choice.summary = summary;
    const std::lock_guard<std::mutex> lock(saving);
    store.save_landmarks(choice);
    chosen = true;
    for (std::size_t b : waiting) store.save_rows(b, rows, first[b], first[b + 1] - first[b]);
  };
  hooks.row_done = [&](const DistanceRows& rows, std::size_t row) {
    const std::size_t b = batch_of[row];
    if (left[b].fetch_sub(1) != 1) return;
    const std::lock_guard<std::mutex> lock(saving);
    if (chosen)
      store.save_rows(b, rows, first[b], first[b + 1] - first[b]);
    else
      waiting.push_back(b);
  };
  pick_landmarks_into(ordered, lo, picked, hooks, stop);
}

// source_rows for a run with a step store: the choice and the rows, each batch taken from the
// store when it holds it, else computed and saved. The same bytes as source_rows: the choice
// is the same sequence and every row the same Dijkstra run. The store may still be writing
// the last batches on return: the caller keeps the rows alive until it has flushed.
SourceRows stored_source_rows(const NeighbourGraph& ordered, std::span<const NodeId> draw_order,
                              const SourceRowsOptions& options, StepStore& store, StopToken stop) {
  const Stopwatch watch;
  LandmarkOptions lo = options.landmarks;
  lo.draw_order = draw_order;
  SourceRows out;
  LandmarkResult picked;
  // After the rows it guards: runs before they are freed.
  const StoreFlush flushed(&store, StoreFlush::on_unwind);
  std::optional<LandmarkResult> saved = store.load_landmarks();
  const std::size_t count = lo.resolved_count(ordered.nodes());
  if (saved && (saved->rows.rows != count || saved->rows.cols != ordered.nodes() ||
                saved->rows.sources.size() != count))
    throw InternalError("saved landmark choice does not fit the graph");
  if (!saved && lo.pick == Pick::maxmin) {
    const ProgressStep step = stop.step("landmark rows", count);
    rows_beside_choice(ordered, lo, store, picked, stop);
    out.rows = std::move(picked.rows);
    out.summary = std::move(picked.summary);
    out.summary.seconds = watch.seconds();
    return out;
  }
  if (saved) {
    picked = std::move(*saved);
  } else {  // a random draw: instant, saved before any row
    const ProgressStep step = stop.step("landmark choice", 0);
    picked = choose_landmarks(ordered, lo, stop);
    store.save_landmarks(picked);
  }
  out.rows = std::move(picked.rows);
  out.summary = std::move(picked.summary);
  DistanceRows& rows = out.rows;
  rows.values.resize(rows.rows * rows.cols);
  const std::vector<std::size_t> first = batch_starts(rows.rows);
  const ProgressStep step = stop.step("landmark rows", rows.rows);
  for (std::size_t b = 0; b + 1 < first.size(); ++b) {
    const std::size_t n = first[b + 1] - first[b];
    if (store.load_rows(b, rows, first[b], n)) {
      stop.advance(n);  // taken back: done as far as the run is concerned
      continue;
    }
    fill_landmark_rows(ordered, rows, first[b], n, stop);
    store.save_rows(b, rows, first[b], n);  // written while the next batch is computed
  }
  out.summary.seconds = watch.seconds();
  return out;
}

// Batch b of the plan's rows, shaped and named but not filled.
DistanceRows residual_batch(const ResidualPlan& plan, std::size_t b, std::size_t nodes) {
  DistanceRows rows;
  const std::span<const NodeId> sources = plan.batch(b);
  rows.sources.assign(sources.begin(), sources.end());
  rows.rows = sources.size();
  rows.cols = nodes;
  rows.values.resize(rows.rows * rows.cols);
  return rows;
}

// The residual variance's source rows for a run with a step store, made before the landmark
// rows so that a run stopped late in those keeps them: each batch the store does not hold is
// computed and saved, and none is held here (the landmark rows need the memory).
void store_residual_rows(const NeighbourGraph& ordered, const ResidualPlan& plan, StepStore& store,
                         StopToken stop) {
  const ProgressStep step = stop.step("residual rows", plan.sources.size());
  // Asked before any batch is saved: the question waits for the store's writes, which would
  // otherwise no longer overlap the next batch's rows.
  std::vector<bool> kept(plan.batches());
  for (std::size_t b = 0; b < plan.batches(); ++b) kept[b] = store.has_residual_rows(b);
  DistanceRows saving;  // the batch the store may still be writing while the next is computed
  const StoreFlush flushed(&store);
  for (std::size_t b = 0; b < plan.batches(); ++b) {
    if (kept[b]) {
      stop.advance(plan.batch(b).size());
      continue;
    }
    DistanceRows rows = residual_rows(ordered, plan, b, stop);
    store.flush();  // the previous batch is stored: its memory may go
    saving = std::move(rows);
    store.save_residual_rows(b, saving);
  }
}

// The residual variance curve of a run with a step store: its rows taken back batch by batch
// (one computed again when its piece is missing or damaged), correlated with the map. Batch
// b + 1 is read on a thread of its own while batch b is correlated (reading is mostly waiting
// for the disk), so two batches are alive at once; the store is still called by one thread
// at a time: a batch is computed again only once the read ahead has returned.
ResidualVarianceCurve stored_residual(const NeighbourGraph& ordered, const ResidualPlan& plan,
                                      const PointSet& coords, StepStore& store, StopToken stop) {
  const auto load = [&](std::size_t b) {
    std::optional<DistanceRows> rows = residual_batch(plan, b, ordered.nodes());
    if (!store.load_residual_rows(b, *rows)) rows.reset();
    return rows;
  };
  std::future<std::optional<DistanceRows>> ahead;  // batch b + 1; joined before it goes
  return correlate_residual(
      plan, coords,
      [&](std::size_t b) {
        std::optional<DistanceRows> rows = b == 0 ? load(0) : ahead.get();
        if (!rows) {
          rows = residual_rows(ordered, plan, b, stop);
          store.save_residual_rows(b, *rows);
          store.flush();  // the batch is freed once correlated
        }
        if (b + 1 < plan.batches()) ahead = std::async(std::launch::async, load, b + 1);
        return std::move(*rows);
      },
      stop);
}

// Short circuits, components and node order of `graph` (engine/embedding_steps.hpp), with the
// graph step's numberings moved in. node_points: row v the point of node v, or empty for a
// given graph.
// Fills `step` in place: it may hold arrays lent to the store (the graph's numberings), which
// must outlive the caller's StoreFlush also when a step here throws, so they never live in a
// frame of this function.
void make_nodes(const NeighbourGraph& graph, const PointSet& node_points,
                const EmbedOptions& options, StopToken stop, StageSeconds& seconds,
                NodesStep& step) {
  if (options.short_circuits) {
    const ProgressStep progress = stop.step("short circuits", 0);
    step.short_circuits = find_short_circuits(graph, *options.short_circuits, stop);
    seconds.short_circuits = step.short_circuits->summary.seconds;
  }
  Stopwatch watch;
  ComponentResult connected = [&] {
    const ProgressStep progress = stop.step("components", 0);
    return make_connected(graph, options.components, node_points, stop);
  }();
  seconds.components = watch.seconds();
  watch = Stopwatch();
  step.ordered = [&] {
    const ProgressStep progress = stop.step("node order", 0);
    return order_nodes(connected, node_points, {options.order});
  }();
  seconds.order = watch.seconds();
  step.components = std::move(connected.summary);
  step.bridges = std::move(connected.bridges);
  step.connected_of_node = std::move(connected.old_of_new);
}

// The steps after the nodes step (engine/embedding_steps.hpp). The store, if any, may still
// be writing the nodes step's arrays: the caller flushes it before they go.
EmbedResult embed_nodes(const NodesStep& nodes, const EmbedOptions& options, StopToken stop,
                        StepStore* store, EmbedResult result, const Stopwatch& total) {
  const Numbering& point_of_node = nodes.point_of_node;
  if (nodes.short_circuits) {
    result.short_circuits = nodes.short_circuits;
    for (ShortCircuitEdge& e : result.short_circuits->worst)
      e.from = point_of_node[e.from], e.to = point_of_node[e.to];
  }
  result.components = nodes.components;
  append_warnings(result.warnings, "components", nodes.components.warnings);
  for (const BridgeEdge& e : nodes.bridges)
    result.bridges.push_back({point_of_node[e.from], point_of_node[e.to], e.length});
  const OrderedGraph& ordered = nodes.ordered;
  result.order = ordered.order;
  const Renumbering& order = ordered.numbering;
  Stopwatch watch;

  // With a step store (landmark mode) the residual variance's rows come before the landmark
  // rows, unless its curve is saved already.
  double residual_seconds = 0;
  std::optional<ResidualPlan> residual_plan;
  if (options.residual) {
    watch = Stopwatch();
    result.residual = store ? store->load_residual() : std::nullopt;
    if (result.residual && result.residual->by_dims.size() != options.spectral.dims)
      throw InternalError("saved residual variance does not fit the map");
    if (!result.residual && store && !options.exact()) {
      residual_plan =
          plan_residual(ordered.graph.nodes(), *options.residual, order.new_of_old.values());
      store_residual_rows(ordered.graph, *residual_plan, *store, stop);
    }
    residual_seconds = watch.seconds();
  }

  watch = Stopwatch();
  SourceRowsOptions so{options.landmarks};
  if (!options.exact())
    so.landmarks.count = LandmarkCount{landmark_count(options, ordered.graph.nodes())};
  std::optional<MapStep> saved = store ? store->load_map() : std::nullopt;
  if (saved && (saved->spectral.coords.rows != ordered.graph.nodes() ||
                saved->spectral.coords.cols != options.spectral.dims))
    throw InternalError("saved map does not fit the graph");
  // The rows go into the result only when asked for; else a saved map needs none read back.
  const bool rows_wanted = options.keep_geodesics;
  SourceRows sources;
  const StoreFlush rows_flushed(store);  // after the rows: the last batches may be in writing
  if (saved && !rows_wanted) {
    sources.rows.cols = ordered.graph.nodes();
    sources.all_nodes = options.exact();
    sources.summary = saved->landmarks;
  } else if (store && !options.exact()) {
    sources = stored_source_rows(ordered.graph, order.new_of_old.values(), so, *store, stop);
  } else {
    sources = source_rows(ordered.graph, order.new_of_old.values(), so, stop);
  }
  result.seconds.geodesics = watch.seconds();
  result.landmarks = sources.summary;
  append_warnings(result.warnings, "landmarks", sources.summary.warnings);

  watch = Stopwatch();
  MapStep made = saved ? std::move(*saved)
                       : MapStep{map_nodes(sources, options.spectral, stop), sources.rows.sources,
                                 sources.summary};
  if (store && !saved) store->save_map(made);
  if (store) store->flush();  // the last row batches, written while the map was made, are stored
  SpectralResult& map = made.spectral;
  // Exact mode lists every node as a landmark, whichever rows are kept.
  const std::vector<NodeId> landmark_nodes = std::move(made.sources);
  if (!rows_wanted) {  // freed now, and not carried back to input rows
    DistanceRows none;
    none.cols = sources.rows.cols;
    sources.rows = std::move(none);
  }
  result.seconds.spectral = watch.seconds();
  watch = Stopwatch();
  if (options.residual && !result.residual) {  // map.coords row v is node v of the ordered graph
    const ProgressStep step = stop.step("residual variance", 0);
    result.residual = residual_plan
                          ? stored_residual(ordered.graph, *residual_plan, map.coords, *store, stop)
                          : graph_residual_variance(ordered.graph, map.coords, *options.residual,
                                                    order.new_of_old.values(), stop);
    if (store) store->save_residual(*result.residual);
  }
  result.seconds.residual = residual_seconds + watch.seconds();
  result.spectral = map.summary;
  append_warnings(result.warnings, "spectral", map.summary.warnings);
  result.spectrum = std::move(map.spectrum);
  result.spectrum_mass = map.mass;
  result.negative_ratio = map.negative_ratio;
  result.landmark_coords = std::move(map.landmark_coords);

  watch = Stopwatch();
  const Numbering ordered_of_point =
      nodes.node_of_point.then(nodes.connected_of_node.inverse()).then(order.new_of_old);
  const Numbering point_of_ordered =
      order.old_of_new.then(nodes.connected_of_node).then(point_of_node);
  InputMap back = map_to_input(map.coords, std::move(sources.rows), landmark_nodes,
                               ordered_of_point, point_of_ordered);
  result.coords = std::move(back.coords);
  result.rows = std::move(back.rows);
  result.dropped = std::move(back.dropped);
  result.landmark_rows = std::move(back.landmark_rows);
  result.geodesic = std::move(back.geodesic);
  result.seconds.map_back = watch.seconds();
  result.seconds.total = total.seconds();
  return result;
}

}  // namespace

void EmbedOptions::validate(std::size_t points) const {
  if (points < 3)
    throw DataError("the input has " + std::to_string(points) +
                    " points; an embedding needs at least 3");
  components.validate();
  if (short_circuits) short_circuits->validate();
  if (residual) residual->validate();
  if (exact()) return;
  landmark_count(*this, points);  // the stage checks again against the graph's nodes
  landmarks.validate(points);
}

EmbedResult embed_points(const PointSet& points, const EmbedOptions& options, StopToken stop,
                         StepStore* store) {
  const Stopwatch total;
  options.validate(points.rows);
  EmbedResult result;
  Stopwatch watch;
  // The nodes step first: a store that holds it spares reading the graph (and its steps).
  std::optional<NodesStep> kept = store ? store->load_nodes() : std::nullopt;
  if (kept && (kept->node_of_point.size() != points.rows || !kept->graph))
    throw InternalError("saved nodes do not fit the points");
  std::optional<NodeGraph> saved;
  if (!kept && store) saved = store->load_graph();
  if (saved && saved->node_of_point.size() != points.rows)
    throw InternalError("saved graph does not fit the points");
  NodeGraph built;
  NodesStep step;
  // Declared after every array lent to the store (the graph's, the nodes step's): flushes
  // before they go.
  const StoreFlush flushed(store);
  if (kept) {
    step = std::move(*kept);
    result.seconds.order = watch.seconds();  // taken back in the node order's place
  } else {
    if (saved) {
      built = std::move(*saved);
      built.node_points = gather_rows(points, built.point_of_node);
    } else {
      built = node_graph(points, options.graph, stop);
      if (store) store->save_graph(built);
    }
    result.seconds.graph = watch.seconds();
    // The numberings stay where the graph piece may be reading them: a move keeps the buffers.
    step.node_of_point = std::move(built.node_of_point);
    step.point_of_node = std::move(built.point_of_node);
    step.graph = built.summary;
    step.dimension = std::move(built.dimension);
    make_nodes(built.graph, built.node_points, options, stop, result.seconds, step);
    if (store) store->save_nodes(step);
  }
  result.graph = step.graph;
  result.dimension = step.dimension;
  append_warnings(result.warnings, "graph", step.graph->warnings);
  return embed_nodes(step, options, stop, store, std::move(result), total);
}

EmbedResult embed_graph(const NeighbourGraph& graph, const EmbedOptions& options, StopToken stop,
                        StepStore* store) {
  const Stopwatch total;
  options.validate(graph.nodes());
  if (options.components.policy == ComponentPolicy::bridge)
    throw OptionError("ComponentOptions.policy",
                      "bridge needs points; a given graph has none (use largest)");
  EmbedResult result;
  const Stopwatch watch;
  std::optional<NodesStep> kept = store ? store->load_nodes() : std::nullopt;
  if (kept && (kept->node_of_point.size() != graph.nodes() || kept->graph))
    throw InternalError("saved nodes do not fit the graph");
  NodesStep step;
  const StoreFlush flushed(store);  // after the nodes step's arrays: flushes before they go
  if (kept) {
    step = std::move(*kept);
    result.seconds.order = watch.seconds();
  } else {
    step.node_of_point = Numbering::identity(graph.nodes());
    step.point_of_node = Numbering::identity(graph.nodes());
    make_nodes(graph, {}, options, stop, result.seconds, step);
    if (store) store->save_nodes(step);
  }
  return embed_nodes(step, options, stop, store, std::move(result), total);
}

}  // namespace unfurl
