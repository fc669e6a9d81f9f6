// Intrinsic dimension by maximum likelihood on nearest-neighbour distances (Levina and Bickel,
// "Maximum likelihood estimation of intrinsic dimension", NIPS 2004):
//   m(x) = [ 1/(k-1) sum_{j=1}^{k-1} log(T_k(x) / T_j(x)) ]^-1,
// T_j(x) the distance from x to its j-th nearest neighbour (x itself excluded). Points are
// combined by averaging the inverses 1/m(x) and inverting the mean, the correction proposed by
// MacKay and Ghahramani (2005) to the plain average of m(x) in the paper.
//
// Duplicates: the estimate is taken on merged points (each distinct point once). A repeated
// row sees its copy at distance 0, which would either be skipped or (with copies in the
// neighbour lists) pull T_j down and the estimate up: 2.19 on a square with 90% repeated rows
// against 1.98 on its distinct rows.
#pragma once

#include <cmath>
#include <cstddef>
#include <exception>
#include <span>
#include <string>
#include <vector>

#include "engine/detail/parallel_chunks.hpp"
#include "engine/points.hpp"
#include "engine/stop.hpp"

namespace unfurl {

struct IntrinsicDimension {
  double estimate = 0;                // [mean over used points of 1/m(x)]^-1
  std::size_t k = 0;                  // neighbours per point
  std::string averaging = "inverse";  // how points are combined (see above)
  std::string points = "distinct";    // which points entered: distinct (merged) rows
  std::size_t points_used = 0;        // points that entered the mean
  std::size_t points_skipped = 0;     // points with a zero distance among their k (duplicates)
  std::vector<std::string> warnings;
};

struct DimensionOptions {
  std::size_t k = 10;  // neighbours per point (x itself excluded); at least 2
  // Throws OptionError naming the field: k < 2.
  void validate() const;
};

// The default number of neighbours for `distinct` distinct points: min(10, distinct - 1);
// 0 (no estimate) below 3 distinct points, as k must be at least 2.
std::size_t default_dimension_k(std::size_t distinct);

// knn_distances: n rows of k distances, row i ascending, the k nearest neighbours of point i
// without i itself (Euclidean, not squared). A point whose nearest distance is 0 has a
// duplicate: log(T_k / 0) is infinite, so such points are skipped and counted, not guarded
// with an arbitrary floor. Throws OptionError (DimensionOptions.k) for k < 2, DataError for
// a wrong size, a negative, non-finite or descending row (named), or when no point can be
// used.
IntrinsicDimension levina_bickel(std::span<const float> knn_distances, std::size_t n,
                                 const DimensionOptions& options);

// The same from any store of neighbour lists: distance(i, j) is the Euclidean distance from
// point i to its (j+1)-th nearest neighbour, j < k (for example the graph stage's lists,
// without a copy of them).
template <class Distance>
IntrinsicDimension levina_bickel_lists(std::size_t n, std::size_t k, Distance distance);

// On the distinct rows of `points` (exact duplicates merged), with its own exact kNN search:
// for callers without neighbour lists (a map scored later, a radius graph). k is lowered to
// distinct - 1 when there are fewer distinct points (with a warning); below 3 distinct points
// there is no estimate (DataError).
IntrinsicDimension intrinsic_dimension(const PointSet& points, const DimensionOptions& options,
                                       StopToken stop = {});

namespace detail {
void check_dimension_row(std::size_t row, std::span<const double> t);
IntrinsicDimension finish_levina_bickel(IntrinsicDimension out, double inverse_sum);
}  // namespace detail

template <class Distance>
IntrinsicDimension levina_bickel_lists(std::size_t n, std::size_t k, Distance distance) {
  IntrinsicDimension out;
  out.k = k;
  if (k < 2) return detail::finish_levina_bickel(out, 0);  // throws, naming DimensionOptions.k
  // Each row's term in parallel (NaN: a skipped row), then summed in row order in double:
  // the result does not depend on any thread count. A chunk stops at its first bad row and
  // the lowest such chunk's error is raised, so the message names the first bad row.
  constexpr std::size_t kChunk = 1 << 14;
  std::vector<double> term(n);
  std::vector<std::exception_ptr> failure((n + kChunk - 1) / kChunk);
  detail::parallel_chunks(n, kChunk, {}, "graph", [&](std::size_t first, std::size_t last) {
    std::vector<double> t(k);
    try {
      for (std::size_t i = first; i < last; ++i) {
        for (std::size_t j = 0; j < k; ++j) t[j] = distance(i, j);
        detail::check_dimension_row(i, t);
        if (t[0] == 0) {
          term[i] = std::nan("");
          continue;
        }
        const double log_tk = std::log(t[k - 1]);
        double s = 0;
        for (std::size_t j = 0; j + 1 < k; ++j) s += log_tk - std::log(t[j]);
        term[i] = s / static_cast<double>(k - 1);
      }
    } catch (...) {
      failure[first / kChunk] = std::current_exception();
    }
  });
  for (const std::exception_ptr& e : failure)
    if (e) std::rethrow_exception(e);
  double inverse_sum = 0;
  for (const double x : term) {
    if (std::isnan(x)) {
      ++out.points_skipped;
      continue;
    }
    inverse_sum += x;
    ++out.points_used;
  }
  return detail::finish_levina_bickel(std::move(out), inverse_sum);
}

}  // namespace unfurl
