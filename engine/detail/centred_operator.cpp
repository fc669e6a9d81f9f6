#include "engine/detail/centred_operator.hpp"

#include <algorithm>
#include <atomic>
#include <cmath>

#include "engine/detail/upper_tiles.hpp"
#include "engine/parallel.hpp"

namespace unfurl::detail {

namespace {
// One row's share of S x: its dot product with x, and its entries times x_i added to the
// column sums. Separate pointers the compiler may assume distinct, and an OpenMP simd
// reduction so the dot product vectorises too: without it the one running sum is a chain of
// dependent additions, and exact mode's operator ran 3x slower. The vector width is fixed at
// compile time, so the summation order, and the map, do not depend on the thread count.
void sum_row(const float* __restrict row, const double* __restrict x, double xi,
             double* __restrict column, std::size_t n, double& dot) {
  double sum = 0.0;
#pragma omp simd reduction(+ : sum)
  for (std::size_t j = 0; j < n; ++j) {
    const double q = static_cast<double>(row[j]) * row[j];
    sum += q * x[j];
    column[j] += q * xi;
  }
  dot = sum;
}

// True when D is square, exactly symmetric and zero on the diagonal (all_geodesic_rows gives
// such rows). One tiled pass, about the cost of one operator product; it lets every later
// product read only the upper triangle.
bool exactly_symmetric(const DistanceRows& d) {
  if (d.rows != d.cols) return false;
  for (std::size_t i = 0; i < d.cols; ++i)
    if (d.row(i)[i] != 0.0f) return false;
  std::atomic<bool> symmetric{true};
  for_upper_pairs_tiled(d.cols, [&](std::size_t i, std::size_t j) {
    if (d.row(i)[j] != d.row(j)[i]) symmetric.store(false, std::memory_order_relaxed);
  });
  return symmetric.load();
}

// Blocks of rows for a product of k vectors: fewer as k grows, so the k column-sum buffers of
// every block stay about the size of one vector's 64 (fixed by N and k: no thread-count
// dependence).
std::size_t blocks_for(std::size_t blocks, std::size_t k) {
  return std::min(blocks, std::max<std::size_t>(8, CentredSquaredOperator::kMaxBlocks / k));
}

// First row of block b of `blocks`: equal shares of the rows, or of the upper triangle's
// entries when only the triangle is read (row i holds n - 1 - i of them).
std::size_t block_start(std::size_t b, std::size_t blocks, std::size_t n, bool triangle) {
  if (b >= blocks) return n;
  if (!triangle) return b * n / blocks;
  const double left = 1.0 - static_cast<double>(b) / static_cast<double>(blocks);
  return std::min(n, static_cast<std::size_t>(static_cast<double>(n) * (1.0 - std::sqrt(left))));
}
}  // namespace

CentredSquaredOperator::CentredSquaredOperator(const DistanceRows& rows, StopToken stop)
    : d_(rows),
      n_(rows.cols),
      blocks_(std::min(kMaxBlocks, std::max<std::size_t>(rows.cols, 1))),
      triangle_(exactly_symmetric(rows)),
      stop_(stop),
      row_means_(rows.cols),
      partial_(blocks_ * rows.cols),
      own_(rows.cols) {
  const std::vector<double> ones(n_, 1.0);
  squared_product(ones.data(), row_means_.data(), 1);
  double total = 0.0;
  for (std::size_t i = 0; i < n_; ++i) {
    row_means_[i] /= static_cast<double>(n_);
    total += row_means_[i];
  }
  grand_mean_ = total / static_cast<double>(n_);
}

std::size_t CentredSquaredOperator::work_bytes(std::size_t n, std::size_t vectors) {
  const std::size_t one = std::min(kMaxBlocks, std::max<std::size_t>(n, 1));
  const std::size_t most = std::max(one, blocks_for(one, vectors) * vectors);
  return (most + vectors + 1) * n * sizeof(double);
}

void CentredSquaredOperator::squared_product(const double* x, double* y, std::size_t k) const {
  const std::size_t count_blocks = blocks_for(blocks_, k);
  const auto blocks = static_cast<std::ptrdiff_t>(count_blocks);
  const std::size_t n = n_;
  const std::size_t width = n * k;  // one block's column sums for all k vectors
  if (partial_.size() < count_blocks * width) partial_.resize(count_blocks * width);
  if (own_.size() < width) own_.resize(width);
  ExceptionCollector errors;
#pragma omp parallel for schedule(dynamic, 1)
  for (std::ptrdiff_t b = 0; b < blocks; ++b) {
    errors.run([&] {
      stop_.check("spectral");
      double* column = partial_.data() + static_cast<std::size_t>(b) * width;
      std::fill(column, column + width, 0.0);
      const auto block = static_cast<std::size_t>(b);
      const std::size_t first = block_start(block, count_blocks, n, triangle_);
      const std::size_t last = block_start(block + 1, count_blocks, n, triangle_);
      for (std::size_t i = first; i < last; ++i) {
        // The triangle: entries j > i, which feed (S x)_i and, through the column sums, (S x)_j.
        // Row i stays in cache while the k vectors pass over it.
        const std::size_t from = triangle_ ? i + 1 : 0;
        for (std::size_t v = 0; v < k; ++v) {
          const double* xv = x + v * n;
          sum_row(d_.row(i) + from, xv + from, xv[i], column + v * n + from, n - from,
                  own_[v * n + i]);
        }
      }
    });
  }
  errors.rethrow();
  const auto count = static_cast<std::ptrdiff_t>(width);
#pragma omp parallel for schedule(static)
  for (std::ptrdiff_t j = 0; j < count; ++j) {
    errors.run([&] {
      double sum = own_[static_cast<std::size_t>(j)];
      for (std::size_t b = 0; b < count_blocks; ++b)
        sum += partial_[b * width + static_cast<std::size_t>(j)];
      y[j] = triangle_ ? sum : 0.5 * sum;  // the full pass counts each pair twice
    });
  }
  errors.rethrow();
}

void CentredSquaredOperator::perform_op(const double* x, double* y) const {
  perform_block(x, y, 1);
}

void CentredSquaredOperator::perform_block(const double* x, double* y, std::size_t k) const {
  squared_product(x, y, k);
  for (std::size_t v = 0; v < k; ++v) {
    const double* xv = x + v * n_;
    double* yv = y + v * n_;
    double sum_x = 0.0, r_x = 0.0;
    for (std::size_t i = 0; i < n_; ++i) {
      sum_x += xv[i];
      r_x += row_means_[i] * xv[i];
    }
    for (std::size_t i = 0; i < n_; ++i)
      yv[i] = -0.5 * (yv[i] - row_means_[i] * sum_x - r_x + grand_mean_ * sum_x);
  }
}

}  // namespace unfurl::detail
