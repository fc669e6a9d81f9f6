// How far to trust a map: the quality scores of engine/quality*.hpp gathered for one map.
// - neighbourhood scores: trustworthiness, continuity, kNN preservation, per k;
// - residual variance curve over 1..m axes, from the landmark geodesic rows when given, else
//   from a seeded sample of input-space pairs (stated in the curve: sampled);
// - intrinsic dimension (Levina-Bickel) from the input points' exact k nearest distances;
// - each axis' share of the positive eigenvalues.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "engine/distance_rows.hpp"
#include "engine/points.hpp"
#include "engine/quality.hpp"
#include "engine/quality_dimension.hpp"
#include "engine/quality_residual.hpp"
#include "engine/stop.hpp"

namespace unfurl {

struct AssessOptions {
  QualityOptions neighbourhoods;        // k values, exact or sampled, seed
  bool residual = true;                 // compute the residual variance curve
  std::size_t residual_pairs = 200000;  // pairs sampled when no geodesic rows are given
  std::size_t dimension_k = 10;         // neighbours for the intrinsic dimension; 0: skip
  void validate(std::size_t points) const;
};

struct Assessment {
  NeighbourhoodScores neighbourhoods;
  std::optional<ResidualVarianceCurve> residual;
  std::optional<IntrinsicDimension> dimension;
  std::vector<double> axis_share;  // eigenvalue of each map axis / sum of positive eigenvalues
  double seconds = 0;
  std::vector<std::string> warnings;
};

// input row r and map row r are the same point. geodesic: rows whose columns are map rows
// (EmbedResult::geodesic), or null for a map made elsewhere. spectrum: eigenvalues (may be
// empty for a foreign map).
Assessment assess_map(const PointSet& input, const PointSet& map, const DistanceRows* geodesic,
                      const std::vector<double>& spectrum, const AssessOptions& options,
                      StopToken stop = {});

}  // namespace unfurl
