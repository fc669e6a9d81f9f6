// The embedding as a sequence of steps over explicit values, each a function whose result
// owns its data (nothing points into another step's result), so that a step's output can be
// saved and the run resumed, shared between settings, or split over ranks from there:
//
//   points --node_graph--> NodeGraph (graph over distinct points, input rows <-> nodes)
//          --make_connected (engine/components.hpp)--> ComponentResult (one component)
//          --order_nodes--> OrderedGraph (the connected graph in memory order)
//          --source_rows--> SourceRows (landmark rows, or all rows in exact mode)
//          --map_nodes--> SpectralResult (spectrum and coordinates in node order)
//          --map_to_input--> InputMap (coordinates, rows, dropped, landmarks as input rows)
//
// Numberings (engine/numbering.hpp) carry each step's ids back to the ones before it.
#pragma once

#include <cstddef>
#include <optional>
#include <span>
#include <vector>

#include "engine/components.hpp"
#include "engine/distance_rows.hpp"
#include "engine/landmarks.hpp"
#include "engine/neighbours.hpp"
#include "engine/numbering.hpp"
#include "engine/reorder.hpp"
#include "engine/spectral.hpp"
#include "engine/stop.hpp"

namespace unfurl {

// Points -> neighbour graph. Exact duplicates share a node; node v's representative is its
// first input row.
struct NodeGraph {
  NeighbourGraph graph;
  Numbering node_of_point;                      // input row -> node (total)
  Numbering point_of_node;                      // node -> representative input row
  PointSet node_points;                         // row v: the point of node v
  std::optional<IntrinsicDimension> dimension;  // from the kNN lists of the search
  GraphSummary summary;
};
NodeGraph node_graph(const PointSet& points, const GraphOptions& options, StopToken stop = {});
// The same from a graph already built over `points` (a graph of a kept search:
// engine/neighbours.hpp graph_from_search).
NodeGraph node_graph(const PointSet& points, GraphResult built);

// Connected graph -> the same graph in memory order (engine/reorder.hpp).
struct NodeOrderOptions {
  NodeOrder order = NodeOrder::morton;  // morton and tree_leaves need points, else bfs
};
struct OrderedGraph {
  NeighbourGraph graph;                // connected node c is node numbering.new_of_old[c]
  Renumbering numbering;               // connected node <-> ordered node
  NodeOrder order = NodeOrder::input;  // the order used (after the fallback to bfs)
};
// node_points: row v holds the point of node v of the graph `connected` was made from, or
// empty (a given graph).
OrderedGraph order_nodes(const ComponentResult& connected, const PointSet& node_points,
                         const NodeOrderOptions& options);

// Ordered graph -> geodesic rows: from landmarks, or from every node in exact mode.
struct SourceRowsOptions {
  // AllLandmarks: every node a source (exact mode), N x N rows with sources 0..N-1.
  // Otherwise the landmark rows; the call's draw_order replaces landmarks.draw_order.
  LandmarkOptions landmarks;
};
struct SourceRows {
  DistanceRows rows;        // sources in ordered nodes; columns: ordered nodes
  bool all_nodes = false;   // exact mode: rows.sources are 0..N-1 in order
  LandmarkSummary summary;  // exact mode: landmarks = nodes = N, seconds and threads
};
// draw_order: the ordered node of each connected node (seeded draws index it, so a node
// order does not change which nodes the seed picks).
SourceRows source_rows(const NeighbourGraph& ordered, std::span<const NodeId> draw_order,
                       const SourceRowsOptions& options, StopToken stop = {});

// Geodesic rows -> spectrum and map coordinates, row v for ordered node v: landmark MDS,
// or classical MDS of all rows in exact mode.
SpectralResult map_nodes(const SourceRows& rows, const SpectralOptions& options,
                         StopToken stop = {});

// Map back to input rows.
struct InputMap {
  PointSet coords;                         // map rows x dims: row r is input row rows[r]
  std::vector<std::size_t> rows;           // input row of each map row, ascending
  std::vector<std::size_t> dropped;        // input rows without a node in the map
  std::vector<std::size_t> landmark_rows;  // representative input row of each landmark
  DistanceRows geodesic;                   // the given rows, columns and sources as map rows
};
// node_of_point: input row -> ordered node (absent: dropped); point_of_node: ordered node ->
// representative input row. node_coords row v is ordered node v. `geodesic` (sources in
// ordered nodes) is taken over and rewritten in place when every map row has its own node.
// A source's map row is the first map row of its node.
InputMap map_to_input(const PointSet& node_coords, DistanceRows geodesic,
                      std::span<const NodeId> landmark_nodes, const Numbering& node_of_point,
                      const Numbering& point_of_node);

}  // namespace unfurl
