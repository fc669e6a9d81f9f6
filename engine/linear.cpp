#include "engine/linear.hpp"

#include <omp.h>

#include <Eigen/Dense>

#include <algorithm>
#include <chrono>
#include <cmath>

#include "engine/detail/eigen_top.hpp"
#include "engine/error.hpp"
#include "engine/parallel.hpp"

namespace unfurl {

void LinearOptions::validate(std::size_t columns) const {
  if (dims < 1) throw OptionError("LinearOptions.dims", "must be at least 1, got 0");
  if (dims > columns)
    throw OptionError("LinearOptions.dims",
                      "must be at most the number of input columns (" + std::to_string(columns) +
                          ") for the linear map, got " + std::to_string(dims));
}

namespace {

// Blocks fixed by N alone (at most 16, to bound the d x d partial sums kept at once).
std::size_t block_count(std::size_t n) {
  return std::min<std::size_t>(16, (n + 1023) / 1024);
}

}  // namespace

LinearResult linear_map(const PointSet& points, const LinearOptions& options, StopToken stop) {
  const auto start = std::chrono::steady_clock::now();
  const std::size_t n = points.rows, d = points.cols;
  options.validate(d);
  if (n < 2) throw DataError("linear map: needs at least 2 points, got " + std::to_string(n));
  for (std::size_t i = 0; i < n * d; ++i)
    if (!std::isfinite(points.values[i]))
      throw DataError("linear map: row " + std::to_string(i / d) + ", column " +
                      std::to_string(i % d) + " is not a finite number");
  const auto di = static_cast<Eigen::Index>(d);
  const std::size_t blocks = block_count(n);
  const auto nb = static_cast<std::ptrdiff_t>(blocks);
  using RowMajor = Eigen::Matrix<float, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>;
  const Eigen::Map<const RowMajor> x(points.values.data(), static_cast<Eigen::Index>(n), di);

  std::vector<Eigen::VectorXd> sums(blocks, Eigen::VectorXd::Zero(di));
  std::vector<Eigen::MatrixXd> products(blocks);
  Eigen::VectorXd mean = Eigen::VectorXd::Zero(di);
  ExceptionCollector errors;
#pragma omp parallel for schedule(dynamic, 1)
  for (std::ptrdiff_t b = 0; b < nb; ++b)
    errors.run([&] {
      stop.check("linear map");
      for (std::size_t i = b * n / blocks; i < (b + 1) * n / blocks; ++i)
        sums[b] += x.row(static_cast<Eigen::Index>(i)).cast<double>().transpose();
    });
  errors.rethrow();
  for (const auto& s : sums) mean += s;
  mean /= static_cast<double>(n);
#pragma omp parallel for schedule(dynamic, 1)
  for (std::ptrdiff_t b = 0; b < nb; ++b)
    errors.run([&] {
      stop.check("linear map");
      products[b] = Eigen::MatrixXd::Zero(di, di);
      constexpr std::size_t kRows = 64;  // coefficient-wise products: a fixed summation order
      const std::size_t last = (b + 1) * n / blocks;
      for (std::size_t i = b * n / blocks; i < last; i += kRows) {
        const auto rows = static_cast<Eigen::Index>(std::min(kRows, last - i));
        const Eigen::MatrixXd centred =
            x.middleRows(static_cast<Eigen::Index>(i), rows).cast<double>().rowwise() -
            mean.transpose();
        products[b].noalias() += centred.transpose().lazyProduct(centred);
      }
    });
  errors.rethrow();
  Eigen::MatrixXd covariance = Eigen::MatrixXd::Zero(di, di);
  for (const auto& p : products) covariance += p;
  covariance /= static_cast<double>(n - 1);

  detail::EigenPairs pairs = detail::dense_top(covariance, options.dims);
  LinearResult out;
  out.spectrum = pairs.spectrum;
  out.mean.assign(mean.data(), mean.data() + d);
  const std::size_t m = options.dims;
  out.coords = PointSet(n, m);
  const auto count = static_cast<std::ptrdiff_t>(n);
#pragma omp parallel
  {
    Eigen::VectorXd centred(di);  // one per thread
#pragma omp for schedule(static)
    for (std::ptrdiff_t i = 0; i < count; ++i)
      errors.run([&] {
        centred = x.row(i).cast<double>().transpose() - mean;
        for (std::size_t k = 0; k < m; ++k)
          out.coords.row(static_cast<std::size_t>(i))[k] =
              static_cast<float>(centred.dot(pairs.vectors.col(static_cast<Eigen::Index>(k))));
      });
  }
  errors.rethrow();
  for (std::size_t k = 0; k < m; ++k) {
    std::size_t at = 0;
    float largest = -1.0f;
    for (std::size_t i = 0; i < n; ++i)
      if (std::abs(out.coords.row(i)[k]) > largest) {  // strict: ties keep the lowest row
        largest = std::abs(out.coords.row(i)[k]);
        at = i;
      }
    const bool flip = out.coords.row(at)[k] < 0.0f;
    if (flip) {
      for (std::size_t i = 0; i < n; ++i) out.coords.row(i)[k] = -out.coords.row(i)[k];
      pairs.vectors.col(static_cast<Eigen::Index>(k)) *= -1.0;
    }
  }
  out.axes.resize(d * m);
  for (std::size_t j = 0; j < d; ++j)
    for (std::size_t k = 0; k < m; ++k)
      out.axes[j * m + k] =
          pairs.vectors(static_cast<Eigen::Index>(j), static_cast<Eigen::Index>(k));
  double total = 0.0, kept = 0.0;
  for (std::size_t k = 0; k < out.spectrum.size(); ++k) {
    total += std::max(0.0, out.spectrum[k]);
    if (k < m) kept += std::max(0.0, out.spectrum[k]);
  }
  out.summary.points = n;
  out.summary.columns = d;
  out.summary.explained = total > 0.0 ? kept / total : 0.0;
  out.summary.threads = omp_get_max_threads();
  out.summary.seconds =
      std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  return out;
}

}  // namespace unfurl
