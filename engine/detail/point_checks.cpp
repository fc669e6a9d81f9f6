#include "engine/detail/point_checks.hpp"

#include <cmath>

#include "engine/error.hpp"

namespace unfurl::detail {

void require_finite(std::span<const float> values, std::size_t cols, const std::string& what,
                    std::size_t first_row) {
  if (cols == 0) return;
  for (std::size_t i = 0; i < values.size(); ++i)
    if (!std::isfinite(values[i]))
      throw DataError(what + ": row " + std::to_string(first_row + i / cols) + ", column " +
                      std::to_string(i % cols) + " is not a finite number");
}

void require_finite(const PointSet& points, const std::string& what) {
  require_finite(points.values, points.cols, what);
}

void require_points(const PointSet& points, const std::string& what) {
  if (points.empty()) throw DataError(what + ": no points (or no columns)");
  if (points.values.size() != points.rows * points.cols)
    throw DataError(what + ": holds " + std::to_string(points.values.size()) +
                    " values, not rows x columns = " + std::to_string(points.rows * points.cols));
  require_finite(points, what);
}

}  // namespace unfurl::detail
