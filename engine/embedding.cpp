#include "engine/embedding.hpp"

#include <algorithm>
#include <limits>
#include <numeric>

#include "engine/error.hpp"
#include "engine/timer.hpp"

namespace unfurl {
namespace {

constexpr NodeId kNoNode = std::numeric_limits<NodeId>::max();

// In exact mode the residual variance needs geodesic rows too, but not all N of them:
// this many evenly spaced rows give its pairs (a documented, deterministic subset).
constexpr std::size_t kExactScoringRows = 256;

void append_warnings(std::vector<std::string>& to, const char* stage,
                     const std::vector<std::string>& from) {
  for (const auto& w : from) to.push_back(std::string(stage) + ": " + w);
}

// Rows `picked` of `all` (N x N, sources 0..N-1), as a new DistanceRows.
DistanceRows select_rows(const DistanceRows& all, const std::vector<NodeId>& picked) {
  DistanceRows out;
  out.rows = picked.size();
  out.cols = all.cols;
  out.sources = picked;
  out.values.resize(out.rows * out.cols);
  for (std::size_t r = 0; r < picked.size(); ++r)
    std::copy_n(all.row(picked[r]), all.cols, out.row(r));
  return out;
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

// Everything after the graph: connect, geodesics, spectral, and the way back to input rows.
// node_of_point: input point -> graph node; point_of_node: graph node -> representative.
EmbedResult embed_connected(const NeighbourGraph& graph, const std::vector<NodeId>& node_of_point,
                            const std::vector<std::size_t>& point_of_node,
                            const PointSet& node_points, const EmbedOptions& options,
                            StopToken stop, EmbedResult result, const Stopwatch& total) {
  Stopwatch watch;
  ComponentResult connected = make_connected(graph, options.components, node_points, stop);
  result.seconds.components = watch.seconds();
  result.components = connected.summary;
  append_warnings(result.warnings, "components", connected.summary.warnings);
  for (const BridgeEdge& e : connected.bridges)
    result.bridges.push_back({static_cast<NodeId>(point_of_node[e.from]),
                              static_cast<NodeId>(point_of_node[e.to]), e.length});

  // Renumber for locality: `g` holds node new_of_old[c] for connected node c.
  watch = Stopwatch();
  result.order = options.order;
  if (node_points.rows == 0 &&
      (options.order == NodeOrder::morton || options.order == NodeOrder::tree_leaves))
    result.order = NodeOrder::bfs;
  PointSet ordered_points;
  if (node_points.rows > 0 && result.order != NodeOrder::bfs && result.order != NodeOrder::input) {
    ordered_points = PointSet(connected.old_of_new.size(), node_points.cols);
    for (std::size_t c = 0; c < connected.old_of_new.size(); ++c)
      std::copy_n(node_points.row(connected.old_of_new[c]), node_points.cols,
                  ordered_points.row(c));
  }
  const Renumbering order = node_order(result.order, connected.graph, ordered_points);
  const NeighbourGraph g = renumber(connected.graph, order);
  connected.graph = NeighbourGraph{};
  result.seconds.order = watch.seconds();
  // graph node -> node of g
  std::vector<NodeId> kept_of_node(graph.nodes(), kNoNode);
  for (std::size_t c = 0; c < connected.old_of_new.size(); ++c)
    kept_of_node[connected.old_of_new[c]] = order.new_of_old[c];
  // node of g -> graph node
  std::vector<NodeId> node_of_kept(g.nodes());
  for (std::size_t c = 0; c < connected.old_of_new.size(); ++c)
    node_of_kept[order.new_of_old[c]] = connected.old_of_new[c];

  watch = Stopwatch();
  SpectralOptions spectral = options.spectral;
  SpectralResult map;
  DistanceRows rows_for_output;
  if (options.exact()) {
    GeodesicResult every = geodesic_rows(g, {EveryNode{}}, stop);
    DistanceRows all = std::move(every.rows);
    result.seconds.geodesics = watch.seconds();
    result.landmarks.landmarks = all.rows;
    result.landmarks.nodes = all.cols;
    result.landmarks.seconds = every.summary.seconds;
    result.landmarks.threads = every.summary.threads;
    watch = Stopwatch();
    map = exact_mds(all, spectral, stop);
    if (options.keep_geodesics) {
      rows_for_output = std::move(all);
    } else {
      std::vector<NodeId> picked;
      const std::size_t count = std::min(all.rows, kExactScoringRows);
      for (std::size_t i = 0; i < count; ++i)
        picked.push_back(static_cast<NodeId>(i * all.rows / count));
      rows_for_output = select_rows(all, picked);
    }
  } else {
    LandmarkOptions lo = options.landmarks;
    lo.count = LandmarkCount{landmark_count(options, g.nodes())};
    lo.draw_order = order.new_of_old;  // the seed picks the same nodes in any node order
    LandmarkResult lr = pick_landmarks(g, lo, stop);
    result.seconds.geodesics = watch.seconds();
    result.landmarks = lr.summary;
    append_warnings(result.warnings, "landmarks", lr.summary.warnings);
    watch = Stopwatch();
    map = landmark_mds(lr.rows, spectral, stop);
    rows_for_output = std::move(lr.rows);
  }
  result.seconds.spectral = watch.seconds();
  if (options.residual)  // map.coords row v is node v of g
    result.residual =
        graph_residual_variance(g, map.coords, *options.residual, order.new_of_old, stop);
  result.spectral = map.summary;
  append_warnings(result.warnings, "spectral", map.summary.warnings);
  result.spectrum = std::move(map.spectrum);
  result.spectrum_mass = map.mass;
  result.negative_ratio = map.negative_ratio;
  result.landmark_coords = std::move(map.landmark_coords);

  // Back to input rows: every point whose node survived, in input order.
  const std::size_t dims = map.coords.cols;
  std::vector<NodeId> kept_of_point(node_of_point.size(), kNoNode);
  for (std::size_t p = 0; p < node_of_point.size(); ++p) {
    const NodeId k = kept_of_node[node_of_point[p]];
    kept_of_point[p] = k;
    if (k == kNoNode)
      result.dropped.push_back(p);
    else
      result.rows.push_back(p);
  }
  result.coords = PointSet(result.rows.size(), dims);
  for (std::size_t r = 0; r < result.rows.size(); ++r)
    std::copy_n(map.coords.row(kept_of_point[result.rows[r]]), dims, result.coords.row(r));

  // Landmarks as input rows; geodesic rows re-indexed to map rows.
  std::vector<std::size_t> map_row_of_kept(g.nodes(), 0);
  for (std::size_t r = result.rows.size(); r-- > 0;)  // the first row of a duplicate group wins
    map_row_of_kept[kept_of_point[result.rows[r]]] = r;
  // Columns from node order to map-row order. Without duplicates the map has one row per
  // node and the rows are permuted in place (one row of scratch), so the L x N rows, the
  // largest array of a landmark run, exist once; duplicates widen the rows into a new array.
  DistanceRows& geo = result.geodesic;
  const bool in_place = result.rows.size() == g.nodes();
  if (in_place) geo = std::move(rows_for_output);
  const DistanceRows& from_rows = in_place ? geo : rows_for_output;
  std::vector<NodeId> sources = from_rows.sources;
  if (!in_place) {
    geo.rows = from_rows.rows;
    geo.values.resize(from_rows.rows * result.rows.size());
  }
  geo.cols = result.rows.size();
  geo.sources.clear();
  std::vector<float> scratch(in_place ? g.nodes() : 0);
  for (std::size_t l = 0; l < geo.rows; ++l) {
    const NodeId kept = sources[l];
    result.landmark_rows.push_back(point_of_node[node_of_kept[kept]]);
    geo.sources.push_back(static_cast<NodeId>(map_row_of_kept[kept]));
    const float* from = in_place ? scratch.data() : from_rows.row(l);
    if (in_place) std::copy_n(geo.row(l), g.nodes(), scratch.data());
    float* to = geo.row(l);
    for (std::size_t r = 0; r < geo.cols; ++r) to[r] = from[kept_of_point[result.rows[r]]];
  }
  rows_for_output = DistanceRows{};
  if (options.exact() && !options.keep_geodesics) {
    // landmark_rows lists every node in exact mode, in node order.
    result.landmark_rows.clear();
    for (NodeId k = 0; k < g.nodes(); ++k)
      result.landmark_rows.push_back(point_of_node[node_of_kept[k]]);
  }
  result.seconds.total = total.seconds();
  return result;
}

}  // namespace

void EmbedOptions::validate(std::size_t points) const {
  if (points < 3)
    throw DataError("the input has " + std::to_string(points) +
                    " points; an embedding needs at least 3");
  components.validate();
  if (residual) residual->validate();
  if (exact()) return;
  landmark_count(*this, points);  // the stage checks again against the graph's nodes
  landmarks.validate(points);
}

EmbedResult embed_points(const PointSet& points, const EmbedOptions& options, StopToken stop) {
  const Stopwatch total;
  options.validate(points.rows);
  EmbedResult result;
  Stopwatch watch;
  GraphResult gr = build_neighbour_graph(points, options.graph, stop);
  result.seconds.graph = watch.seconds();
  result.graph = gr.summary;
  result.dimension = std::move(gr.dimension);
  append_warnings(result.warnings, "graph", gr.summary.warnings);
  // The points of the nodes (duplicates merged): for bridging and point-based node orders.
  PointSet node_points(gr.point_of_node.size(), points.cols);
  for (std::size_t v = 0; v < gr.point_of_node.size(); ++v)
    std::copy_n(points.row(gr.point_of_node[v]), points.cols, node_points.row(v));
  return embed_connected(gr.graph, gr.node_of_point, gr.point_of_node, node_points, options, stop,
                         std::move(result), total);
}

EmbedResult embed_graph(const NeighbourGraph& graph, const EmbedOptions& options, StopToken stop) {
  const Stopwatch total;
  options.validate(graph.nodes());
  if (options.components.policy == ComponentPolicy::bridge)
    throw OptionError("ComponentOptions.policy",
                      "bridge needs points; a given graph has none (use largest)");
  std::vector<NodeId> node_of_point(graph.nodes());
  std::iota(node_of_point.begin(), node_of_point.end(), NodeId{0});
  std::vector<std::size_t> point_of_node(graph.nodes());
  std::iota(point_of_node.begin(), point_of_node.end(), std::size_t{0});
  return embed_connected(graph, node_of_point, point_of_node, {}, options, stop, EmbedResult{},
                         total);
}

}  // namespace unfurl
