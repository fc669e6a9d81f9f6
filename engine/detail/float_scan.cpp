#include "engine/detail/float_scan.hpp"

#include <cmath>

namespace unfurl::detail {
namespace {
constexpr double kUnitRoundoff = 0x1p-24;  // float32 unit roundoff
// Products of tiny coordinates underflow: each rounding then errs by up to 2^-149 absolutely,
// or 2^-126 where the kernel runs with flush-to-zero (a process built with fast-math flags),
// which no bound relative to the norms covers. 2^-120 a term covers both with room.
constexpr double kUnderflowPerTerm = 0x1p-120;
}  // namespace

ScanData prepare_scan(const PointSet& data) {
  ScanData s;
  const std::size_t n = data.rows, d = data.cols;
  s.mean.assign(d, 0.0);
  for (std::size_t i = 0; i < n; ++i)
    for (std::size_t j = 0; j < d; ++j) s.mean[j] += data.row(i)[j];
  for (double& m : s.mean) m /= static_cast<double>(n);
  s.rows = n;
  s.cols = d;
  s.y.resize(n * d);
  s.norm2.resize(n);
  for (std::size_t i = 0; i < n; ++i) {
    double sum = 0.0;
    for (std::size_t j = 0; j < d; ++j) {
      const float v = static_cast<float>(data.row(i)[j] - s.mean[j]);
      s.y[i * d + j] = v;
      sum += static_cast<double>(v) * v;
    }
    s.norm2[i] = static_cast<float>(sum);
    s.max_norm = std::max(s.max_norm, std::sqrt(sum));
  }
  return s;
}

double scan_slack(const ScanData& s, double norm2) {
  const double gamma = 2.0 * static_cast<double>(s.cols + 4) * kUnitRoundoff;
  const double reach = std::sqrt(norm2) + s.max_norm;
  return gamma * reach * reach + static_cast<double>(s.cols + 4) * kUnderflowPerTerm;
}

double centred_norm2(const ScanData& s, const float* row) {
  double sum = 0.0;
  for (std::size_t j = 0; j < s.mean.size(); ++j) {
    const double v = static_cast<float>(row[j] - s.mean[j]);
    sum += v * v;
  }
  return sum;
}

QueryBlock gather_queries(const ScanData& s, const PointSet& queries,
                          std::span<const std::size_t> rows) {
  QueryBlock b;
  const std::size_t d = queries.cols;
  b.x.resize(rows.size() * d);
  b.norm2.resize(rows.size());
  b.slack.resize(rows.size());
  for (std::size_t r = 0; r < rows.size(); ++r) {
    double sum = 0.0;
    for (std::size_t j = 0; j < d; ++j) {
      const float v = static_cast<float>(queries.row(rows[r])[j] - s.mean[j]);
      b.x[r * d + j] = v;
      sum += static_cast<double>(v) * v;
    }
    b.norm2[r] = static_cast<float>(sum);
    b.slack[r] = scan_slack(s, sum);
  }
  return b;
}

}  // namespace unfurl::detail
