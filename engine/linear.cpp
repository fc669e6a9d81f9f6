#include "engine/linear.hpp"

#include <omp.h>

#include <Eigen/Dense>

#include <algorithm>
#include <chrono>

#include "engine/detail/pca.hpp"
#include "engine/detail/point_checks.hpp"
#include "engine/error.hpp"

namespace unfurl {

void LinearOptions::validate(std::size_t columns) const {
  if (dims < 1) throw OptionError("LinearOptions.dims", "must be at least 1, got 0");
  if (dims > columns)
    throw OptionError("LinearOptions.dims",
                      "must be at most the number of input columns (" + std::to_string(columns) +
                          ") for the linear map, got " + std::to_string(dims));
}

LinearResult linear_map(const PointSet& points, const LinearOptions& options, StopToken stop) {
  const auto start = std::chrono::steady_clock::now();
  const std::size_t n = points.rows, d = points.cols;
  options.validate(d);
  if (n < 2) throw DataError("linear map: needs at least 2 points, got " + std::to_string(n));
  const ProgressStep step = stop.step("linear map", 0);
  detail::require_finite(points, "linear map");
  const std::size_t m = options.dims;
  const auto rows = [&](std::size_t b, std::size_t e) { return detail::double_rows(points, b, e); };
  detail::PcaFit fit =
      detail::fit_pca(n, d, rows, m, detail::AxisSign::largest_entry_positive, stop);
  LinearResult out;
  out.coords = PointSet(n, m);
  for (std::size_t b = 0; b < n; b += detail::kPcaRowBlock) {
    stop.check("linear map");
    const std::size_t e = std::min(n, b + detail::kPcaRowBlock);
    const Eigen::MatrixXd y = detail::project_rows(rows(b, e), fit.mean, fit.axes, m);
    for (std::size_t i = b; i < e; ++i)
      for (std::size_t k = 0; k < m; ++k)
        out.coords.row(i)[k] =
            static_cast<float>(y(static_cast<Eigen::Index>(i - b), static_cast<Eigen::Index>(k)));
  }
  out.spectrum = std::move(fit.variances);
  out.axes = std::move(fit.axes);
  out.mean = std::move(fit.mean);
  out.summary.points = n;
  out.summary.columns = d;
  out.summary.explained = fit.kept_share;
  out.summary.threads = omp_get_max_threads();
  out.summary.seconds =
      std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  return out;
}

}  // namespace unfurl
