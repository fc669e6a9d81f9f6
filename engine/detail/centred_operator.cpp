#include "engine/detail/centred_operator.hpp"

#include <algorithm>

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
}  // namespace

CentredSquaredOperator::CentredSquaredOperator(const DistanceRows& rows, StopToken stop)
    : d_(rows),
      n_(rows.cols),
      blocks_(std::min(kMaxBlocks, std::max<std::size_t>(rows.cols, 1))),
      stop_(stop),
      row_means_(rows.cols),
      partial_(blocks_ * rows.cols),
      own_(rows.cols) {
  const std::vector<double> ones(n_, 1.0);
  squared_product(ones.data(), row_means_.data());
  double total = 0.0;
  for (std::size_t i = 0; i < n_; ++i) {
    row_means_[i] /= static_cast<double>(n_);
    total += row_means_[i];
  }
  grand_mean_ = total / static_cast<double>(n_);
}

std::size_t CentredSquaredOperator::work_bytes(std::size_t n) {
  return (std::min(kMaxBlocks, std::max<std::size_t>(n, 1)) + 2) * n * sizeof(double);
}

void CentredSquaredOperator::squared_product(const double* x, double* y) const {
  const auto blocks = static_cast<std::ptrdiff_t>(blocks_);
  const std::size_t n = n_;
  ExceptionCollector errors;
#pragma omp parallel for schedule(dynamic, 1)
  for (std::ptrdiff_t b = 0; b < blocks; ++b) {
    errors.run([&] {
      stop_.check("spectral");
      double* column = partial_.data() + static_cast<std::size_t>(b) * n;
      std::fill(column, column + n, 0.0);
      const std::size_t first = static_cast<std::size_t>(b) * n / blocks_;
      const std::size_t last = static_cast<std::size_t>(b + 1) * n / blocks_;
      for (std::size_t i = first; i < last; ++i) {
        sum_row(d_.row(i), x, x[i], column, n, own_[i]);
      }
    });
  }
  errors.rethrow();
  const auto count = static_cast<std::ptrdiff_t>(n);
#pragma omp parallel for schedule(static)
  for (std::ptrdiff_t j = 0; j < count; ++j) {
    errors.run([&] {
      double sum = own_[static_cast<std::size_t>(j)];
      for (std::size_t b = 0; b < blocks_; ++b)
        sum += partial_[b * n + static_cast<std::size_t>(j)];
      y[j] = 0.5 * sum;
    });
  }
  errors.rethrow();
}

void CentredSquaredOperator::perform_op(const double* x, double* y) const {
  squared_product(x, y);
  double sum_x = 0.0, r_x = 0.0;
  for (std::size_t i = 0; i < n_; ++i) {
    sum_x += x[i];
    r_x += row_means_[i] * x[i];
  }
  for (std::size_t i = 0; i < n_; ++i)
    y[i] = -0.5 * (y[i] - row_means_[i] * sum_x - r_x + grand_mean_ * sum_x);
}

}  // namespace unfurl::detail
