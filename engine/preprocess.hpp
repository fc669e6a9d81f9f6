// Preprocessing of points before the neighbour search, fitted once and recorded so that
// new points (placed into an existing map later) get exactly the same transformation.
// Order of the steps: scale each column, then (cosine) normalise each row to unit length,
// then project on the top principal components.
#pragma once

#include <cstddef>
#include <string>
#include <vector>

#include "engine/points.hpp"

namespace unfurl {

enum class Scale {
  none,      // columns as given
  standard,  // (x - mean) / standard deviation (population, ddof 0)
  robust,    // (x - median) / interquartile range (quartiles by linear interpolation)
};
enum class Metric {
  euclidean,  // distances as given
  cosine,     // rows scaled to unit length: Euclidean distance is then sqrt(2 - 2 cos)
};
const char* scale_name(Scale scale);
const char* metric_name(Metric metric);

struct PreprocessOptions {
  Scale scale = Scale::none;          // per-column scaling
  Metric metric = Metric::euclidean;  // cosine: unit-length rows, so the exact search serves
  std::size_t pca = 0;                // > 0: keep the top pca principal components; 0: off
  void validate(std::size_t rows, std::size_t cols) const;  // pca <= cols; pca needs 2 rows
};

struct PreprocessModel {
  std::size_t input_cols = 0;
  Scale scale = Scale::none;
  Metric metric = Metric::euclidean;
  std::vector<double> centre;         // per input column: mean, median, or 0 (none)
  std::vector<double> spread;         // per input column: divisor, 1 where the spread was zero
  std::size_t components = 0;         // 0: no projection
  std::vector<double> pca_mean;       // per column after scaling and normalising
  std::vector<double> axes;           // components x input_cols, row-major, unit length; each
                                      // axis's largest-magnitude entry is positive
  std::vector<double> variances;      // variance (divisor N) along each kept axis, descending
  double variance_kept = 1.0;         // share of the total variance the kept axes hold
  std::vector<std::string> warnings;  // zero-spread columns and what was done

  std::size_t output_cols() const { return components ? components : input_cols; }
};

// DataError for non-finite values (naming row and column) or, with cosine, rows that are
// all zeros after scaling. The projection follows detail/pca.hpp's convention (population
// covariance, exact d x d in double, each axis's largest-magnitude entry positive).
PreprocessModel fit_preprocess(const PointSet& points, const PreprocessOptions& options);

// Applies a fitted model to any points with input_cols columns (DataError otherwise).
PointSet apply_preprocess(const PreprocessModel& model, const PointSet& points);

}  // namespace unfurl
