// Residual variance of a map against given distances, for d = 1..m map axes:
//   1 - R^2(D_given, D_map(d)), R Pearson's correlation over a set of point pairs and D_map(d)
//   the Euclidean distance using the first d map axes (Tenenbaum, de Silva and Langford,
//   Science 290, 2000, note 42). The elbow of the curve over d suggests the intrinsic dimension.
#pragma once

#include <cstddef>
#include <cstdint>
#include <span>
#include <string>
#include <vector>

#include "engine/distance_rows.hpp"
#include "engine/points.hpp"
#include "engine/stop.hpp"

namespace unfurl {

struct ResidualVarianceCurve {
  std::vector<double> by_dims;  // by_dims[d - 1]: 1 - R^2 with the first d map axes, d = 1..m
  std::size_t pairs = 0;        // number of point pairs correlated
  bool sampled = false;         // the pairs are a sample, not every landmark-to-point pair
  double seconds = 0;           // wall time
  std::vector<std::string> warnings;
};

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

// `count` pairs of distinct rows drawn uniformly (with replacement among pairs) with `seed`,
// each with its Euclidean distance in `points`: the given distances when there are no geodesic
// rows. Throws OptionError ("--pairs") when count is 0, DataError for fewer than 2 points.
std::vector<PairDistance> sample_pair_distances(const PointSet& points, std::size_t count,
                                                std::uint64_t seed);

}  // namespace unfurl
