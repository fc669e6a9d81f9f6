// The linear baseline (`--linear`): principal component analysis of the points, to show
// what a map that ignores the geodesics looks like. It follows the project's one PCA
// convention (engine/detail/pca.hpp): exact d x d population covariance (divisor N), sums
// over fixed blocks of rows in row order (bytes independent of the thread count), each
// axis's largest-magnitude entry positive.
#pragma once

#include <cstddef>
#include <string>
#include <vector>

#include "engine/points.hpp"
#include "engine/stop.hpp"

namespace unfurl {

struct LinearOptions {
  std::size_t dims = 2;  // axes of the map

  // Throws OptionError naming the field: dims < 1 or dims > the input's columns.
  void validate(std::size_t columns) const;
};

struct LinearSummary {
  std::size_t points = 0;   // rows mapped
  std::size_t columns = 0;  // input dimensions
  double explained = 0.0;   // share of the total variance on the kept axes
  double seconds = 0.0;     // wall time
  int threads = 0;          // OpenMP threads
};

struct LinearResult {
  PointSet coords;               // N x dims float32
  std::vector<double> spectrum;  // covariance eigenvalues (variances, divisor N), descending, all d
  std::vector<double> axes;      // dims x d principal directions, row-major, one axis per row
  std::vector<double> mean;      // d: the centre subtracted before projecting
  LinearSummary summary;
};

// Throws OptionError for bad options, DataError for fewer than 2 points or a non-finite
// value (naming its row and column), InterruptedError when `stop` is requested.
LinearResult linear_map(const PointSet& points, const LinearOptions& options, StopToken stop = {});

}  // namespace unfurl
