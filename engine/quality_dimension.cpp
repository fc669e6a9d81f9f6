#include "engine/quality_dimension.hpp"

#include <cmath>

#include "engine/error.hpp"

namespace unfurl {

IntrinsicDimension levina_bickel(std::span<const float> knn_distances, std::size_t n,
                                 std::size_t k) {
  if (k < 2)
    throw OptionError("--k: intrinsic dimension needs at least 2 neighbours, got " +
                      std::to_string(k));
  if (n == 0) throw DataError("intrinsic dimension: no points");
  if (knn_distances.size() != n * k)
    throw DataError("intrinsic dimension: " + std::to_string(knn_distances.size()) +
                    " distances for " + std::to_string(n) + " points of " + std::to_string(k) +
                    " neighbours");
  IntrinsicDimension out;
  out.k = k;
  // Summed in row order in double: the result does not depend on any thread count.
  double inverse_sum = 0;
  for (std::size_t i = 0; i < n; ++i) {
    const float* t = knn_distances.data() + i * k;
    for (std::size_t j = 0; j < k; ++j) {
      if (!std::isfinite(t[j]) || t[j] < 0 || (j > 0 && t[j] < t[j - 1]))
        throw DataError("intrinsic dimension: row " + std::to_string(i) +
                        " of the neighbour distances is not finite, non-negative and ascending");
    }
    if (t[0] == 0) {
      ++out.points_skipped;
      continue;
    }
    const double log_tk = std::log(static_cast<double>(t[k - 1]));
    double s = 0;
    for (std::size_t j = 0; j + 1 < k; ++j) s += log_tk - std::log(static_cast<double>(t[j]));
    inverse_sum += s / static_cast<double>(k - 1);
    ++out.points_used;
  }
  if (out.points_used == 0)
    throw DataError("intrinsic dimension: every point has a duplicate (a zero distance)");
  if (!(inverse_sum > 0))
    throw DataError("intrinsic dimension: every point sees its k neighbours at one distance");
  out.estimate = static_cast<double>(out.points_used) / inverse_sum;
  if (out.points_skipped > 0)
    out.warnings.push_back("intrinsic dimension: skipped " + std::to_string(out.points_skipped) +
                           " points with a duplicate among their neighbours");
  return out;
}

}  // namespace unfurl
