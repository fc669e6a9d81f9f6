// B = -1/2 J S J applied to a vector without forming B: S holds the squared geodesic
// distances, taken on the fly from the N x N float32 rows and symmetrised as
// S_ij = (D_ij^2 + D_ji^2) / 2 (two Dijkstra runs can round d(i, j) and d(j, i) apart by an
// ulp, and the Lanczos solver needs an exactly symmetric operator). With r the row means of
// S and g their mean, B x = -1/2 (S x - r (1'x) - 1 (r'x) + g (1'x) 1).
//
// One pass over D per product: every D_ij feeds both (S x)_i and (S x)_j. When D is exactly
// symmetric with a zero diagonal (checked once, in the constructor) the pass reads only the
// upper triangle, half the memory traffic; otherwise all of D, symmetrised as above. The column
// part is accumulated per block of rows into that block's own buffer and the buffers are added in
// block order, with blocks fixed by N and the number of vectors: the sums do not depend on the
// thread count. Several vectors go side by side in lanes (see squared_product_lanes).
#pragma once

#include <Eigen/Core>

#include <cstddef>
#include <vector>

#include "engine/distance_rows.hpp"
#include "engine/stop.hpp"

namespace unfurl::detail {

class CentredSquaredOperator {
 public:
  using Scalar = double;
  static constexpr std::size_t kMaxBlocks = 64;

  CentredSquaredOperator(const DistanceRows& rows, StopToken stop);

  Eigen::Index rows() const { return static_cast<Eigen::Index>(n_); }
  Eigen::Index cols() const { return static_cast<Eigen::Index>(n_); }
  // y = B x; polls the stop token (throws InterruptedError).
  void perform_op(const double* x, double* y) const;
  // Y = B X for k vectors (X, Y: n x k, column-major) in one pass over D: the memory traffic
  // of one product, which dominates, is shared by all k (the spectrum estimate's probes).
  void perform_block(const double* x, double* y, std::size_t k) const;

  // trace(B) = -1/2 sum_i (S_ii - 2 r_i + g) = n g / 2, as S has a zero diagonal.
  double trace() const { return 0.5 * static_cast<double>(n_) * grand_mean_; }

  // Bytes held besides the rows: block buffers and means, for products of `vectors` vectors.
  static std::size_t work_bytes(std::size_t n, std::size_t vectors = 1);

 private:
  // Y = S X (symmetrised squared distances) for k vectors, without centring.
  void squared_product(const double* x, double* y, std::size_t k) const;
  void squared_product_one(const double* x, double* y) const;
  // k > 1: the vectors side by side in lanes (row-major copy of X), one pass over D.
  void squared_product_lanes(const double* x, double* y, std::size_t k) const;
  // In parallel over `blocks` blocks of rows: fill(first row, end row, the block's `width`
  // column sums, zeroed). Blocks fixed by N and k, never by the thread count.
  template <class Fill>
  void over_blocks(std::size_t blocks, std::size_t width, const Fill& fill) const;
  // Y (n x k, column-major) = the row sums plus the blocks' column sums, added in block order.
  void add_blocks(std::size_t blocks, std::size_t lanes, std::size_t k, double* y) const;

  const DistanceRows& d_;
  std::size_t n_;
  std::size_t blocks_;
  bool triangle_;  // D exactly symmetric, zero diagonal: read the upper triangle only
  StopToken stop_;
  std::vector<double> row_means_;
  double grand_mean_ = 0.0;
  mutable std::vector<double> partial_;  // blocks x n_ x lanes: column sums of each block of rows
  mutable std::vector<double> own_;      // n_ x lanes (k > 1) or n_: the row sums
  mutable std::vector<double> lanes_;    // n_ x lanes: X row-major, padded with zeros
};

}  // namespace unfurl::detail
