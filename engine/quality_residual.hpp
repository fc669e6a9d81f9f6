// Residual variance of a map against given distances, for d = 1..m map axes:
//   1 - R^2(D_given, D_map(d)), R Pearson's correlation over a set of point pairs and D_map(d)
//   the Euclidean distance using the first d map axes (Tenenbaum, de Silva and Langford,
//   Science 290, 2000, note 42). The elbow of the curve over d suggests the intrinsic dimension.
#pragma once

#include <cstddef>
#include <cstdint>
#include <functional>
#include <span>
#include <string>
#include <vector>

#include "engine/distance_rows.hpp"
#include "engine/graph.hpp"
#include "engine/points.hpp"
#include "engine/stop.hpp"

namespace unfurl {

struct ResidualVarianceCurve {
  std::vector<double> by_dims;  // by_dims[d - 1]: 1 - R^2 with the first d map axes, d = 1..m
  std::vector<double> standard_error;  // by_dims' jackknife standard error (sampled sources)
  std::size_t pairs = 0;               // number of point pairs correlated
  bool sampled = false;                // the pairs are a sample of all pairs
  std::string drawn;                   // how the pairs were drawn, in words
  double seconds = 0;                  // wall time
  std::vector<std::string> warnings;
};

// The pairs of the embedding's own residual variance: every pair up to all_pairs_limit nodes,
// beyond that every node paired with `sources` source nodes drawn uniformly without
// replacement (seeded; never the landmarks as such, which maxmin places at the edges, where
// the pairs read low). Measured on a 2,000-point Swiss roll, 256 random sources gave 1 - R^2
// within 3.5% (rms over 20 draws) of the all-pairs value; the curve carries a jackknife
// standard error over the source rows.
struct ResidualOptions {
  std::size_t all_pairs_limit = 2000;  // up to this many nodes: every pair
  std::size_t sources = 256;           // beyond: at most this many sampled source rows
  // Each source row is a Dijkstra run over the whole graph, as costly as a landmark row, so on
  // large graphs the count shrinks to keep sources x nodes within pair_budget, never below
  // min_sources (but never above `sources`). With the defaults: 256 sources up to 250,000
  // nodes, 64 from 1,000,000 on; bench/RESULTS.md has the value and standard error at 1M with
  // 256 and with 64 sources.
  std::size_t pair_budget = 64'000'000;
  std::size_t min_sources = 64;
  std::uint64_t seed = 1;  // of the source draw
  // Throws OptionError naming the field: sources or min_sources < 1 (no row to pair with).
  void validate() const;
  // The number of sampled source rows on a graph of `nodes` nodes (beyond all_pairs_limit).
  std::size_t source_count(std::size_t nodes) const;
};

// Over the rows of geodesic_rows from the sources ResidualOptions picks on `graph`; coords
// row v is node v. draw_order as in LandmarkOptions: the seed indexes it, so a renumbering
// of the graph does not change the nodes drawn. The rows are computed a batch at a time
// (memory: a batch of rows, never N x N). Deterministic for any thread count.
ResidualVarianceCurve graph_residual_variance(const NeighbourGraph& graph, const PointSet& coords,
                                              const ResidualOptions& options,
                                              std::span<const NodeId> draw_order,
                                              StopToken stop = {});

// graph_residual_variance in two halves, for a run that keeps its steps (engine/step_store.hpp):
// the source rows depend on the graph and options only, so they can be made (and saved) before
// the map exists; the curve then correlates them with the map, a batch of rows at a time.
struct ResidualPlan {
  static constexpr std::size_t kBatch = 16;  // rows per batch: memory is 16 rows whatever N is
  std::vector<NodeId> sources;               // graph node ids, as residual_sources gives them
  std::string drawn;                         // as residual_sources gives it
  bool sampled = false;                      // fewer sources than nodes
  std::size_t batches() const { return (sources.size() + kBatch - 1) / kBatch; }
  std::span<const NodeId> batch(std::size_t b) const;  // the sources of batch b
};

// The plan of graph_residual_variance on a graph of `nodes` nodes (options validated here).
ResidualPlan plan_residual(std::size_t nodes, const ResidualOptions& options,
                           std::span<const NodeId> draw_order);

// The geodesic rows of the plan's batch b over every node of `graph`.
DistanceRows residual_rows(const NeighbourGraph& graph, const ResidualPlan& plan, std::size_t b,
                           StopToken stop = {});

// The curve over the plan's rows; rows_of(b) gives batch b (called once per batch, in order,
// each batch freed before the next is asked for). InternalError when a batch is not the
// plan's. The same curve, bit for bit, as graph_residual_variance with the same plan.
ResidualVarianceCurve correlate_residual(const ResidualPlan& plan, const PointSet& coords,
                                         const std::function<DistanceRows(std::size_t)>& rows_of,
                                         StopToken stop = {});

// Which rows of an N-node graph the residual variance uses (graph node ids, ascending in the
// caller's numbering), and the words for how they were drawn.
std::vector<NodeId> residual_sources(std::size_t nodes, const ResidualOptions& options,
                                     std::span<const NodeId> draw_order, std::string& drawn);

// Over every pair (sources[r], j), j != sources[r], of the landmark-to-all geodesic rows
// (geodesic.cols == map.rows). Pairs between two landmarks appear once from each side.
// Deterministic for any thread count (per-row moments combined in row order).
ResidualVarianceCurve residual_variance(const DistanceRows& geodesic, const PointSet& map,
                                        StopToken stop = {});

// A pair of map rows and their given distance (geodesic, input-space, ...).
struct PairDistance {
  NodeId a = 0;
  NodeId b = 0;
  double distance = 0;
};

// Over the given pairs (a != b); the curve is marked sampled.
ResidualVarianceCurve residual_variance(std::span<const PairDistance> pairs, const PointSet& map,
                                        StopToken stop = {});

struct PairSampleOptions {
  std::size_t count = 200000;  // pairs drawn; at least 1
  std::uint64_t seed = 1;      // of the draw
  // Throws OptionError naming the field: count < 1.
  void validate() const;
};

// `count` pairs of distinct rows drawn uniformly (with replacement among pairs) with `seed`,
// each with its Euclidean distance in `points`: the given distances when there are no geodesic
// rows. Throws OptionError for bad options, DataError for fewer than 2 points.
std::vector<PairDistance> sample_pair_distances(const PointSet& points,
                                                const PairSampleOptions& options);

}  // namespace unfurl
