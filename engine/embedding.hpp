// The embedding pipeline, in memory: points (or a given graph) -> neighbour graph ->
// one connected component -> geodesic rows from landmarks (or from every node in exact
// mode) -> classical / landmark MDS -> a map with one row per kept input point.
//
// Row bookkeeping. Input points become graph nodes (exact duplicates share one node), the
// component policy may drop nodes, and the spectral stage returns one row per remaining
// node. The result maps back: `coords` row r belongs to input point `rows[r]` (ascending, so
// the map keeps the input order), and every duplicate gets its representative's coordinates.
// The pipeline is a sequence of steps with results of their own: engine/embedding_steps.hpp.
#pragma once

#include <cstddef>
#include <optional>
#include <string>
#include <variant>
#include <vector>

#include "engine/components.hpp"
#include "engine/distance_rows.hpp"
#include "engine/geodesic.hpp"
#include "engine/landmarks.hpp"
#include "engine/neighbours.hpp"
#include "engine/quality_residual.hpp"
#include "engine/reorder.hpp"
#include "engine/short_circuit.hpp"
#include "engine/spectral.hpp"
#include "engine/stop.hpp"

namespace unfurl {

class StepStore;  // engine/step_store.hpp

struct EmbedOptions {
  GraphOptions graph;           // neighbour graph (ignored for embed_graph)
  ComponentOptions components;  // what to do with a disconnected graph
  // Landmark count, pick rule and seed. A count of AllLandmarks is exact mode: every node a
  // source, N x N geodesics (memory-bounded), no landmark approximation.
  LandmarkOptions landmarks;
  SpectralOptions spectral;  // map dimensions (the one place they are set) and eigen solver
  // Return the landmark rows (exact mode: all N rows), columns in map-row order, for placing
  // new points or a residual variance from them; without it the rows are freed after the map.
  bool keep_geodesics = false;
  // When set, the residual variance curve from geodesic rows of the graph itself, from
  // sources that represent all pairs (engine/quality_residual.hpp), not the landmark rows.
  std::optional<ResidualOptions> residual;
  // Node order for the shortest-path stage (memory locality; results map back to input
  // order). morton and tree_leaves need points: for a given graph they fall back to bfs.
  NodeOrder order = NodeOrder::morton;
  // Short-circuit suspects of the graph (engine/short_circuit.hpp), before the component
  // choice; none: not checked.
  std::optional<ShortCircuitOptions> short_circuits = ShortCircuitOptions{};
  // Throws OptionError naming the field; `points` is the number of input points.
  void validate(std::size_t points) const;
  bool exact() const { return std::holds_alternative<AllLandmarks>(landmarks.count); }
};

// Wall seconds of each step; total also holds what no step names (validation, moves).
struct StageSeconds {
  double graph = 0, short_circuits = 0, components = 0, order = 0, geodesics = 0, spectral = 0;
  double residual = 0;  // geodesic rows of the residual variance score (options.residual)
  double map_back = 0;  // coordinates and geodesic rows back to input rows
  double total = 0;
};

struct EmbedResult {
  PointSet coords;                         // map rows x dims, float32
  std::vector<std::size_t> rows;           // input point of each map row, ascending
  std::vector<std::size_t> dropped;        // input points left out (outside the component)
  std::vector<std::size_t> landmark_rows;  // input point (representative) of each landmark
  std::vector<double> landmark_coords;     // landmarks x dims
  std::vector<double> spectrum;            // eigenvalues of B, descending
  SpectrumMass spectrum_mass;              // whole-spectrum masses (exact or estimated)
  double negative_ratio = 0;               // spectrum_mass.ratio()
  // Landmark geodesic rows with columns in map-row order (keep_geodesics); otherwise no rows
  // (cols still set).
  DistanceRows geodesic;
  std::optional<ResidualVarianceCurve> residual;  // with options.residual; over graph nodes
  std::optional<GraphSummary> graph;              // absent for a given graph
  std::optional<IntrinsicDimension> dimension;    // from the graph stage's kNN lists, if any
  ComponentSummary components;
  std::vector<BridgeEdge> bridges;  // as input points (from, to), when bridged
  // With options.short_circuits: the suspects, endpoints as input points (representatives).
  std::optional<ShortCircuitResult> short_circuits;
  LandmarkSummary landmarks;
  SpectralSummary spectral;
  NodeOrder order = NodeOrder::input;  // the node order the geodesics ran in
  StageSeconds seconds;
  std::vector<std::string> warnings;  // every stage's warnings, prefixed by stage
};

// From points. The graph options pick the neighbourhood; exact duplicates are merged.
// `store`, when given, keeps each step's result as it completes and gives back those an
// earlier run kept (engine/step_store.hpp); the result is the same bytes either way.
EmbedResult embed_points(const PointSet& points, const EmbedOptions& options, StopToken stop = {},
                         StepStore* store = nullptr);

// From a given graph (edge list or partial distances): nodes are the input rows.
// The bridge policy needs points and is refused here.
EmbedResult embed_graph(const NeighbourGraph& graph, const EmbedOptions& options,
                        StopToken stop = {}, StepStore* store = nullptr);

}  // namespace unfurl
