#include "engine/preprocess.hpp"

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>

#include "engine/detail/pca.hpp"
#include "engine/detail/point_checks.hpp"
#include "engine/error.hpp"

namespace unfurl {
namespace {

constexpr std::size_t kRowBlock = detail::kPcaRowBlock;

// Linear interpolation between order statistics, as numpy.percentile's default.
double percentile(std::vector<double>& v, double q) {
  const double at = q * static_cast<double>(v.size() - 1);
  const auto lo = static_cast<std::size_t>(std::floor(at));
  std::nth_element(v.begin(), v.begin() + static_cast<std::ptrdiff_t>(lo), v.end());
  const double a = v[lo];
  if (lo + 1 >= v.size()) return a;
  const double b = *std::min_element(v.begin() + static_cast<std::ptrdiff_t>(lo + 1), v.end());
  return a + (at - static_cast<double>(lo)) * (b - a);
}

void fit_scale(const PointSet& p, PreprocessModel& m) {
  const std::size_t d = p.cols;
  m.centre.assign(d, 0.0);
  m.spread.assign(d, 1.0);
  if (m.scale == Scale::none) return;
  std::vector<double> column(p.rows);
  for (std::size_t j = 0; j < d; ++j) {
    double mean = 0.0;
    for (std::size_t i = 0; i < p.rows; ++i) mean += column[i] = p.row(i)[j];
    mean /= static_cast<double>(p.rows);
    double var = 0.0;
    for (double x : column) var += (x - mean) * (x - mean);
    const double sd = std::sqrt(var / static_cast<double>(p.rows));
    if (m.scale == Scale::standard) {
      m.centre[j] = mean;
      m.spread[j] = sd;
    } else {
      m.centre[j] = percentile(column, 0.5);
      m.spread[j] = percentile(column, 0.75) - percentile(column, 0.25);
      if (m.spread[j] == 0.0 && sd > 0.0) {
        m.warnings.push_back("column " + std::to_string(j) +
                             ": interquartile range 0, scaled by its standard deviation");
        m.spread[j] = sd;
      }
    }
    if (m.spread[j] == 0.0) {
      m.warnings.push_back("column " + std::to_string(j) + ": constant, centred but not scaled");
      m.spread[j] = 1.0;
    }
  }
}

// Scaling and row normalisation of rows [b, e) into a double block.
Eigen::MatrixXd scaled_block(const PreprocessModel& m, const PointSet& p, std::size_t b,
                             std::size_t e) {
  const std::size_t d = p.cols;
  Eigen::MatrixXd x(static_cast<Eigen::Index>(e - b), static_cast<Eigen::Index>(d));
  for (std::size_t i = b; i < e; ++i) {
    double norm2 = 0.0;
    for (std::size_t j = 0; j < d; ++j) {
      const double v = (p.row(i)[j] - m.centre[j]) / m.spread[j];
      x(static_cast<Eigen::Index>(i - b), static_cast<Eigen::Index>(j)) = v;
      norm2 += v * v;
    }
    if (m.metric == Metric::cosine) {
      if (norm2 == 0.0)
        throw DataError("points: row " + std::to_string(i) +
                        " is all zeros after scaling; the cosine metric needs a direction");
      x.row(static_cast<Eigen::Index>(i - b)) /= std::sqrt(norm2);
    }
  }
  return x;
}

void fit_pca(const PointSet& p, std::size_t components, PreprocessModel& m) {
  const detail::PcaFit fit = detail::fit_pca(
      p.rows, p.cols, [&](std::size_t b, std::size_t e) { return scaled_block(m, p, b, e); },
      components);
  m.components = components;
  m.pca_mean = fit.mean;
  m.axes = fit.axes;
  for (std::size_t c = 0; c < components; ++c)
    m.variances.push_back(std::max(0.0, fit.variances[c]));
  m.variance_kept = fit.kept_share;
}

}  // namespace

const char* scale_name(Scale scale) {
  switch (scale) {
    case Scale::none:
      return "none";
    case Scale::standard:
      return "standard";
    case Scale::robust:
      return "robust";
  }
  return "?";
}

const char* metric_name(Metric metric) {
  return metric == Metric::cosine ? "cosine" : "euclidean";
}

void PreprocessOptions::validate(std::size_t rows, std::size_t cols) const {
  if (pca > cols)
    throw OptionError(
        "PreprocessOptions.pca",
        "at most the number of columns (" + std::to_string(cols) + "), got " + std::to_string(pca));
  if (pca > 0 && rows < 2)
    throw OptionError("PreprocessOptions.pca",
                      "needs at least 2 points, got " + std::to_string(rows));
}

PreprocessModel fit_preprocess(const PointSet& points, const PreprocessOptions& options) {
  options.validate(points.rows, points.cols);
  if (points.rows == 0 || points.cols == 0) throw DataError("points: empty");
  detail::require_finite(points, "points");
  PreprocessModel m;
  m.input_cols = points.cols;
  m.scale = options.scale;
  m.metric = options.metric;
  fit_scale(points, m);
  if (options.pca > 0) {
    fit_pca(points, options.pca, m);
  } else if (m.metric == Metric::cosine) {  // refuse zero rows at fitting time as well
    for (std::size_t b = 0; b < points.rows; b += kRowBlock)
      scaled_block(m, points, b, std::min(points.rows, b + kRowBlock));
  }
  return m;
}

PointSet apply_preprocess(const PreprocessModel& m, const PointSet& points) {
  if (points.cols != m.input_cols)
    throw DataError("points: " + std::to_string(points.cols) +
                    " columns, the model was fitted on " + std::to_string(m.input_cols));
  detail::require_finite(points, "points");
  PointSet out(points.rows, m.output_cols());
  for (std::size_t b = 0; b < points.rows; b += kRowBlock) {
    const std::size_t e = std::min(points.rows, b + kRowBlock);
    Eigen::MatrixXd x = scaled_block(m, points, b, e);
    if (m.components) x = detail::project_rows(std::move(x), m.pca_mean, m.axes, m.components);
    for (std::size_t i = b; i < e; ++i)
      for (std::size_t j = 0; j < out.cols; ++j)
        out.row(i)[j] =
            static_cast<float>(x(static_cast<Eigen::Index>(i - b), static_cast<Eigen::Index>(j)));
  }
  return out;
}

}  // namespace unfurl
