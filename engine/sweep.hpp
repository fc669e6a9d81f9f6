// The neighbourhood sweep: the same points embedded at several settings of k (or of the
// radius), side by side, so that the setting can be chosen from what it does to the map.
//
// Shared work. One neighbour search runs at the largest setting; every smaller setting's
// graph is cut from its lists (engine/neighbours.hpp graph_from_search: equal edge for edge
// to a fresh search). Larger settings give supergraphs (union, mutual and radius rules
// alike), so the largest setting has the fewest components; its kept component is where the
// landmarks are picked, once. A smaller setting reuses them when its own kept component
// holds every one of them; when it drops a node that carries a landmark (a disconnected graph
// under ComponentPolicy::largest), it picks its own with the same rule and seed and its row
// says so (SweepRow::shared_landmarks false). Exact mode (AllLandmarks) has nothing to share.
//
// Per setting (SweepRow): components and edges of the graph, the short-circuit suspects of
// the graph as built (engine/short_circuit.hpp, as embed checks them), the map
// (engine/embedding_steps) with the largest dims of the range, residual variance for every
// dims of the range, T(k) and C(k) at the one evaluation k with their intervals and kNN
// preservation on the first score_dims axes (engine/quality.hpp), and the non-Euclidean
// ratio of the spectrum. The residual variance is over the pairs of every node with the
// landmarks, whose geodesic rows the map was made from: no extra shortest paths, and the
// same source nodes in every setting that shares the landmarks (embed's own curve uses 256
// random sources instead, so its values differ a little). Plus one row for the linear
// baseline (PCA) scored the same way, its residual variance against the input distances.
//
// Flags and recommendation (the README states the rule): a setting is flagged when its
// residual variance at score_dims rises by more than jump_rise over the previous embedded
// setting, or its T falls by more than trust_drop with disjoint intervals. The recommended
// setting is the smallest one that is embedded, connected without help (one component), has
// no suspects, lies below the first flagged setting, and whose T is within near_best of the
// best such T. Otherwise the best-T embedded setting is named with the reason it is a weaker
// choice; when no setting could be embedded, `usable` is false and the reason says why.
#pragma once

#include <cstddef>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "engine/components.hpp"
#include "engine/landmarks.hpp"
#include "engine/neighbours.hpp"
#include "engine/quality.hpp"
#include "engine/quality_residual.hpp"
#include "engine/reorder.hpp"
#include "engine/short_circuit.hpp"
#include "engine/spectral.hpp"
#include "engine/stop.hpp"

namespace unfurl {

struct SweepOptions {
  // The settings, ascending and distinct, all of one rule (k-nearest or radius); at most
  // max_settings of them. Default: k = 5, 10, ..., 40.
  std::vector<Neighbourhood> settings = {NearestK{5},  NearestK{10}, NearestK{15}, NearestK{20},
                                         NearestK{25}, NearestK{30}, NearestK{35}, NearestK{40}};
  // mutual, search back end, duplicates; its neighbourhood is ignored (the settings rule).
  GraphOptions graph;
  ComponentOptions components;  // fail: a disconnected setting is listed, not embedded
  std::size_t dims_low = 1;     // residual variance over dims_low..dims_high axes;
  std::size_t dims_high = 6;    // the maps have dims_high axes
  std::size_t score_dims = 2;   // T, C and the flags on the first score_dims axes
  // Its ks: the one evaluation k (default 12). Every setting is scored, so exactly up to
  // 10,000 points only (embed: 50,000), sampled beyond.
  QualityOptions scores = {.ks = {12}, .exact_limit = 10000};
  LandmarkOptions landmarks;            // count (automatic: for dims_high axes), pick rule, seed
  SpectralOptions spectral;             // eigen solver; its dims is dims_high
  NodeOrder order = NodeOrder::morton;  // node order of the shortest-path stage
  ShortCircuitOptions suspects;         // the short-circuit check of every setting's graph
  bool linear_baseline = true;          // add the PCA row
  double jump_rise = 0.05;   // residual variance rise that flags a setting (common practice,
                             // no source: well above the sampling error of 256 sources)
  double trust_drop = 0.01;  // drop of T that flags a setting (with disjoint intervals)
  double near_best = 0.01;   // the recommendation's T may lie this far below the best
  std::size_t max_settings = 100;

  // Throws OptionError naming the field (SweepOptions.settings shown as NearestK.k or
  // WithinRadius.radius, SweepOptions.dims_low, ...) for `points` input points.
  void validate(std::size_t points) const;
};

struct SweepRow {
  Neighbourhood setting;
  bool linear = false;         // the PCA row (no graph)
  std::size_t nodes = 0;       // graph nodes (distinct points)
  std::size_t edges = 0;       // undirected edges
  std::size_t components = 0;  // before the component policy
  std::size_t largest_component = 0;
  std::size_t isolated_nodes = 0;
  bool embedded = false;           // false: see `skipped`
  std::string skipped;             // why no map was made ("disconnected: 3 components ...")
  std::size_t map_points = 0;      // input rows in the map
  std::size_t dropped_points = 0;  // input rows left out (largest component policy)
  std::size_t landmarks = 0;
  bool shared_landmarks = false;  // the landmarks picked at the largest setting
  // Residual variance for dims_low..dims_high axes (index d - dims_low) and its standard error.
  std::vector<double> residual, residual_error;
  std::string residual_basis;  // "geodesics from the landmarks", or "input distances" (PCA)
  NeighbourhoodScore score;    // at the evaluation k, on score_dims axes (terms cleared)
  double negative_ratio = 0, negative_ratio_error = 0;
  std::optional<std::size_t> suspects;  // short-circuit suspects; absent: not checked
  // The worst suspects (up to ShortCircuitOptions.worst) as pairs of input rows, worst first.
  std::vector<std::pair<std::size_t, std::size_t>> suspect_rows;
  std::vector<std::string> flags;     // "residual variance jump", "trustworthiness drop"
  PointSet map;                       // the first two axes (or one), map_points rows
  std::vector<std::size_t> map_rows;  // input row of each map row
  double seconds = 0;
  std::vector<std::string> warnings;
};

struct SweepResult {
  std::vector<SweepRow> rows;              // one per setting, ascending
  std::optional<SweepRow> linear;          // the PCA row
  bool usable = false;                     // some setting was embedded
  std::optional<std::size_t> recommended;  // index into rows
  std::string recommendation;              // in plain words, with the reason (or why none)
  // Summary
  std::size_t points = 0, nodes = 0;
  std::size_t score_k = 0;
  double search_seconds = 0;  // the one neighbour search
  double seconds = 0;         // wall time of the sweep
  std::vector<std::string> warnings;
};

// Throws OptionError for bad options, DataError for unusable points (as the graph stage),
// InterruptedError when `stop` is requested. A setting that cannot be embedded is a row
// saying why, not an error.
SweepResult sweep_neighbourhoods(const PointSet& points, const SweepOptions& options,
                                 StopToken stop = {});

// "k 10" or "radius 0.5": a setting in words, for rows, messages and files.
std::string setting_name(const Neighbourhood& setting);
// The setting's value (k or radius) as a number, for tables and figures.
double setting_value(const Neighbourhood& setting);

}  // namespace unfurl
