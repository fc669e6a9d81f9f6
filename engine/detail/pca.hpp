// Principal component analysis: the one routine behind the linear baseline, the projection of
// `--pre-pca` and the morton node order. Its convention, for every caller:
// - centre: the column means, in double;
// - covariance: the exact d x d population covariance, divisor N (as the standard scaling's
//   deviation; scikit-learn's PCA.explained_variance_ divides by N - 1 instead);
// - order: blocks of kPcaRowBlock rows summed in row order (Eigen's rankUpdate per block), so
//   the bytes do not depend on the thread count;
// - axes: eigenvectors of the covariance by decreasing eigenvalue, unit length, each signed so
//   that its largest-magnitude entry is positive (ties: the lowest column);
// - kept share: the kept eigenvalues (each clamped at 0) over the trace (clamped at 0); 1 when
//   the trace is 0.
#pragma once

#include <Eigen/Dense>
#include <cstddef>
#include <functional>
#include <span>
#include <vector>

#include "engine/points.hpp"
#include "engine/stop.hpp"

namespace unfurl::detail {

constexpr std::size_t kPcaRowBlock = 2048;  // rows converted to double at a time

// Rows [begin, end) of the data, as (end - begin) x d doubles.
using PcaRows = std::function<Eigen::MatrixXd(std::size_t begin, std::size_t end)>;

// Rows [begin, end) of points, widened to double.
Eigen::MatrixXd double_rows(const PointSet& points, std::size_t begin, std::size_t end);

enum class AxisSign {
  largest_entry_positive,  // the convention above
  as_solved,  // the eigen solver's own signs (pca_probe compares them with the convention)
};

struct PcaFit {
  std::size_t cols = 0;
  std::size_t components = 0;
  std::vector<double> mean;       // cols
  std::vector<double> axes;       // components x cols, row-major
  std::vector<double> variances;  // all cols eigenvalues of the covariance, descending
  double kept_share = 1.0;        // share of the total variance on the kept axes
};

// Throws InternalError if the eigen solver fails; InterruptedError when `stop` is requested.
// The rows must be finite (callers check with require_finite) and 1 <= components <= cols.
PcaFit fit_pca(std::size_t rows, std::size_t cols, const PcaRows& source, std::size_t components,
               AxisSign sign = AxisSign::largest_entry_positive, StopToken stop = {});

// The morton order's cheaper fit (a locality heuristic needs a good subspace, not the exact
// one): the caller passes a sample of the rows (sample_rows), and only the top `components`
// axes are solved, by Spectra's Lanczos solver on the covariance (tolerance 1e-12; the dense
// solver when cols <= 2 * components + 1). Centre and covariance follow the convention above
// over the rows given; the axes follow its sign rule; `variances` holds the kept eigenvalues
// only and kept_share divides them by the trace. Every step is serial, so the bytes depend on
// neither the thread count nor the sample's position in the data.
PcaFit fit_pca_top(std::size_t rows, std::size_t cols, const PcaRows& source,
                   std::size_t components, StopToken stop = {});

// min(rows, limit) row indices spread evenly: i * rows / s for i < s, s = min(rows, limit).
std::vector<std::size_t> sample_rows(std::size_t rows, std::size_t limit);

// (block - mean) * axes', one row of coordinates per row of the block.
Eigen::MatrixXd project_rows(Eigen::MatrixXd block, std::span<const double> mean,
                             std::span<const double> axes, std::size_t components);

}  // namespace unfurl::detail
