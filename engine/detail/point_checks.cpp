#include "engine/detail/point_checks.hpp"

#include <cmath>
#include <string>

#include "engine/error.hpp"

namespace unfurl::detail {

void require_finite(const PointSet& points, const char* what) {
  if (points.empty()) throw DataError(std::string(what) + ": no points (or no columns)");
  if (points.values.size() != points.rows * points.cols)
    throw DataError(std::string(what) + ": holds " + std::to_string(points.values.size()) +
                    " values, not rows x columns = " + std::to_string(points.rows * points.cols));
  for (std::size_t i = 0; i < points.rows; ++i) {
    const float* p = points.row(i);
    for (std::size_t c = 0; c < points.cols; ++c)
      if (!std::isfinite(p[c]))
        throw DataError(std::string(what) + ": row " + std::to_string(i) + " column " +
                        std::to_string(c) + " is not finite (rows counted from 0)");
  }
}

}  // namespace unfurl::detail
