#include "engine/quality_dimension.hpp"

#include <algorithm>

#include "engine/detail/duplicates.hpp"
#include "engine/error.hpp"
#include "engine/neighbours.hpp"

namespace unfurl {

std::size_t default_dimension_k(std::size_t distinct) {
  return distinct < 3 ? 0 : std::min<std::size_t>(10, distinct - 1);
}

void DimensionOptions::validate() const {
  if (k < 2)
    throw OptionError("DimensionOptions.k",
                      "intrinsic dimension needs at least 2 neighbours, got " + std::to_string(k));
}

namespace detail {

void check_dimension_row(std::size_t row, std::span<const double> t) {
  for (std::size_t j = 0; j < t.size(); ++j)
    if (!std::isfinite(t[j]) || t[j] < 0 || (j > 0 && t[j] < t[j - 1]))
      throw DataError("intrinsic dimension: row " + std::to_string(row) +
                      " of the neighbour distances is not finite, non-negative and ascending");
}

IntrinsicDimension finish_levina_bickel(IntrinsicDimension out, double inverse_sum) {
  DimensionOptions{.k = out.k}.validate();
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

}  // namespace detail

IntrinsicDimension levina_bickel(std::span<const float> knn_distances, std::size_t n,
                                 const DimensionOptions& options) {
  options.validate();
  const std::size_t k = options.k;
  if (n == 0) throw DataError("intrinsic dimension: no points");
  if (knn_distances.size() != n * k)
    throw DataError("intrinsic dimension: " + std::to_string(knn_distances.size()) +
                    " distances for " + std::to_string(n) + " points of " + std::to_string(k) +
                    " neighbours");
  return levina_bickel_lists(n, k, [&](std::size_t i, std::size_t j) {
    return static_cast<double>(knn_distances[i * k + j]);
  });
}

IntrinsicDimension intrinsic_dimension(const PointSet& points, const DimensionOptions& options,
                                       StopToken stop) {
  options.validate();
  const std::size_t k = options.k;
  const detail::DuplicateGroups dup = detail::find_duplicates(points, stop);
  const std::size_t distinct = dup.point_of_node.size();
  if (distinct < 3)
    throw DataError("intrinsic dimension: needs at least 3 distinct points, the data have " +
                    std::to_string(distinct));
  const std::size_t used_k = std::min(k, distinct - 1);
  PointSet merged;
  if (dup.extra_rows > 0) merged = detail::select_rows(points, dup.point_of_node);
  const PointSet& rows = dup.extra_rows > 0 ? merged : points;
  const KnnResult knn = exact_knn(rows, rows, {.k = used_k, .exclude_self = true}, stop);
  IntrinsicDimension out = levina_bickel(knn.distance, rows.rows, {.k = used_k});
  if (used_k < k)
    out.warnings.push_back("intrinsic dimension: k lowered from " + std::to_string(k) + " to " +
                           std::to_string(used_k) + " for " + std::to_string(distinct) +
                           " distinct points");
  return out;
}

}  // namespace unfurl
