#include "engine/embedding_steps.hpp"

#include "engine/error.hpp"
#include "engine/geodesic.hpp"

namespace unfurl {

NodeGraph node_graph(const PointSet& points, const GraphOptions& options, StopToken stop) {
  return node_graph(points, build_neighbour_graph(points, options, stop));
}

NodeGraph node_graph(const PointSet& points, GraphResult built) {
  NodeGraph out;
  const std::size_t nodes = built.point_of_node.size();
  out.node_of_point = Numbering(std::move(built.node_of_point), nodes);
  std::vector<NodeId> point_of_node(built.point_of_node.begin(), built.point_of_node.end());
  out.point_of_node = Numbering(std::move(point_of_node), points.rows);
  // The points of the nodes (duplicates merged): for bridging and point-based node orders.
  out.node_points = gather_rows(points, out.point_of_node);
  out.graph = std::move(built.graph);
  out.dimension = std::move(built.dimension);
  out.summary = std::move(built.summary);
  return out;
}

OrderedGraph order_nodes(const ComponentResult& connected, const PointSet& node_points,
                         const NodeOrderOptions& options) {
  OrderedGraph out;
  out.order = options.order;
  const bool wants_points = out.order == NodeOrder::morton || out.order == NodeOrder::tree_leaves;
  if (wants_points && node_points.rows == 0) out.order = NodeOrder::bfs;
  PointSet connected_points;
  if (wants_points && node_points.rows > 0)
    connected_points = gather_rows(node_points, connected.old_of_new);
  out.numbering = node_order(out.order, connected.connected_graph(), connected_points);
  out.graph = renumber(connected.connected_graph(), out.numbering);
  return out;
}

SourceRows source_rows(const NeighbourGraph& ordered, std::span<const NodeId> draw_order,
                       const SourceRowsOptions& options, StopToken stop) {
  SourceRows out;
  if (std::holds_alternative<AllLandmarks>(options.landmarks.count)) {
    const ProgressStep step = stop.step("geodesic rows", ordered.nodes());
    GeodesicResult every = geodesic_rows(ordered, {EveryNode{}}, stop);
    out.rows = std::move(every.rows);
    out.all_nodes = true;
    out.summary.landmarks = out.rows.rows;
    out.summary.nodes = out.rows.cols;
    out.summary.seconds = every.summary.seconds;
    out.summary.threads = every.summary.threads;
    return out;
  }
  LandmarkOptions lo = options.landmarks;
  lo.draw_order = draw_order;
  const auto* count = std::get_if<LandmarkCount>(&lo.count);
  const ProgressStep step = stop.step("landmark rows", count ? count->count : 0);
  LandmarkResult picked = pick_landmarks(ordered, lo, stop);
  out.rows = std::move(picked.rows);
  out.summary = std::move(picked.summary);
  return out;
}

SpectralResult map_nodes(const SourceRows& rows, const SpectralOptions& options, StopToken stop) {
  // Units: points triangulated (landmark MDS); exact mode's solver has no count to give.
  const ProgressStep step = stop.step("spectral", rows.all_nodes ? 0 : rows.rows.cols);
  return rows.all_nodes ? exact_mds(rows.rows, options, stop)
                        : landmark_mds(rows.rows, options, stop);
}

InputMap map_to_input(const PointSet& node_coords, DistanceRows geodesic,
                      std::span<const NodeId> landmark_nodes, const Numbering& node_of_point,
                      const Numbering& point_of_node) {
  if (node_of_point.target_size() != node_coords.rows || point_of_node.size() != node_coords.rows ||
      geodesic.cols != node_coords.rows)
    throw InternalError("map_to_input: numberings and rows disagree on the node count");
  InputMap out;
  out.rows = node_of_point.present();
  out.dropped = node_of_point.missing();
  const Numbering node_of_row = node_of_point.restricted(out.rows);
  const Numbering row_of_node = node_of_row.inverse();  // the first map row of each node
  out.coords = gather_rows(node_coords, node_of_row);
  for (NodeId v : landmark_nodes) out.landmark_rows.push_back(point_of_node[v]);
  gather_columns(geodesic, node_of_row);
  for (NodeId& s : geodesic.sources) {
    if (!row_of_node.has(s))
      throw InternalError("map_to_input: geodesic source " + std::to_string(s) + " has no map row");
    s = row_of_node[s];
  }
  out.geodesic = std::move(geodesic);
  return out;
}

}  // namespace unfurl
