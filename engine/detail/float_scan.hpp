// Approximate squared distances from float32 products, with a proven bound on their error:
// the first pass of the blocked neighbour scan (knn_scan.cpp) and of the high-dimensional
// score ranks (rank_products.cpp). Both recompute exactly whatever the bound cannot decide.
//
// The data are centred at their column means (which shrinks the norms and so the
// cancellation in |x|^2 - 2 x.y + |y|^2), stored as float32, and the block products run in
// OpenBLAS (float_product.hpp). The bound is that of a float dot product,
// |fl(x.y) - x.y| <= gamma_d |x| |y| with gamma_d ~ d u (Higham, "Accuracy and Stability of
// Numerical Algorithms", 2nd ed., section 3.1), widened to gamma_{d+4} for the norms and the
// centring, and doubled for safety.
#pragma once

#include <algorithm>
#include <cstddef>
#include <span>
#include <vector>

#include "engine/detail/float_product.hpp"
#include "engine/points.hpp"

namespace unfurl::detail {

constexpr std::size_t kColumnBlock = 2048;  // columns per product: B x 2048 floats per thread

struct ScanData {
  std::size_t rows = 0, cols = 0;
  std::vector<double> mean;
  std::vector<float> y;      // centred data rows, row-major rows x cols
  std::vector<float> norm2;  // |y|^2 per row
  double max_norm = 0.0;
};

ScanData prepare_scan(const PointSet& data);

// Bound on |approximate - exact| squared distance for a centred query of squared norm
// `norm2` against any data row: float32 rounding relative to the norms, plus an absolute
// term for products that underflow (with or without flush-to-zero).
double scan_slack(const ScanData& s, double norm2);

// The squared norm of `row` once centred and rounded as the scan stores rows.
double centred_norm2(const ScanData& s, const float* row);

struct QueryBlock {
  std::vector<float> x;  // centred query rows, row-major
  std::vector<float> norm2;
  std::vector<double> slack;  // bound on |approximate - exact| squared distance, per row
};

// The listed rows of `queries` (with the data's columns), centred as the data.
QueryBlock gather_queries(const ScanData& s, const PointSet& queries,
                          std::span<const std::size_t> rows);

// Visits the approximate squared distances of the block's rows to every data row, one
// column block at a time, in increasing column order: visit(r, c0, approximations, count).
template <class Visit>
void for_each_column_block(const ScanData& s, const QueryBlock& b, Visit&& visit) {
  const std::size_t n = s.rows, d = s.cols;
  const std::size_t rows = b.norm2.size();
  std::vector<float> product(rows * kColumnBlock), approx(kColumnBlock);
  for (std::size_t c0 = 0; c0 < n; c0 += kColumnBlock) {
    const std::size_t cn = std::min(kColumnBlock, n - c0);
    product_transposed(b.x.data(), rows, s.y.data() + c0 * d, cn, d, product.data());
    for (std::size_t r = 0; r < rows; ++r) {
      const float* p = product.data() + r * cn;
      for (std::size_t j = 0; j < cn; ++j) approx[j] = b.norm2[r] + s.norm2[c0 + j] - 2.0f * p[j];
      visit(r, c0, approx.data(), cn);
    }
  }
}

}  // namespace unfurl::detail
