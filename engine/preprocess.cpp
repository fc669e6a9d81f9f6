#include "engine/preprocess.hpp"

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>

#include "engine/error.hpp"

namespace unfurl {
namespace {

constexpr std::size_t kRowBlock = 2048;  // rows converted to double at a time for the covariance

std::string cell(std::size_t i, std::size_t j) {
  return "points: row " + std::to_string(i) + ", column " + std::to_string(j);
}

void require_finite(const PointSet& p) {
  for (std::size_t i = 0; i < p.rows; ++i)
    for (std::size_t j = 0; j < p.cols; ++j)
      if (!std::isfinite(p.row(i)[j])) throw DataError(cell(i, j) + " is not a finite number");
}

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
  const auto d = static_cast<Eigen::Index>(p.cols);
  Eigen::VectorXd mean = Eigen::VectorXd::Zero(d);
  for (std::size_t b = 0; b < p.rows; b += kRowBlock)
    mean += scaled_block(m, p, b, std::min(p.rows, b + kRowBlock)).colwise().sum().transpose();
  mean /= static_cast<double>(p.rows);
  Eigen::MatrixXd cov = Eigen::MatrixXd::Zero(d, d);
  for (std::size_t b = 0; b < p.rows; b += kRowBlock) {
    Eigen::MatrixXd x = scaled_block(m, p, b, std::min(p.rows, b + kRowBlock));
    x.rowwise() -= mean.transpose();
    cov.selfadjointView<Eigen::Lower>().rankUpdate(x.transpose());
  }
  cov = cov.selfadjointView<Eigen::Lower>();
  cov /= static_cast<double>(p.rows);
  const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> eig(cov);
  if (eig.info() != Eigen::Success) throw InternalError("pca: eigen decomposition failed");
  const double total = std::max(0.0, eig.eigenvalues().sum());
  m.components = components;
  m.pca_mean.assign(mean.data(), mean.data() + d);
  m.axes.resize(components * p.cols);
  double kept = 0.0;
  for (std::size_t c = 0; c < components; ++c) {
    const Eigen::Index col = d - 1 - static_cast<Eigen::Index>(c);  // ascending order
    Eigen::VectorXd axis = eig.eigenvectors().col(col);
    Eigen::Index big;
    axis.cwiseAbs().maxCoeff(&big);
    if (axis(big) < 0) axis = -axis;
    std::copy(axis.data(), axis.data() + d,
              m.axes.begin() + static_cast<std::ptrdiff_t>(c * p.cols));
    const double variance = std::max(0.0, eig.eigenvalues()(col));
    m.variances.push_back(variance);
    kept += variance;
  }
  m.variance_kept = total > 0.0 ? kept / total : 1.0;
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
  require_finite(points);
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
  require_finite(points);
  PointSet out(points.rows, m.output_cols());
  const auto d = static_cast<Eigen::Index>(m.input_cols);
  const Eigen::Map<const Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>>
      axes(m.axes.data(), static_cast<Eigen::Index>(m.components), d);
  const Eigen::Map<const Eigen::RowVectorXd> mean(m.pca_mean.data(), m.components ? d : 0);
  for (std::size_t b = 0; b < points.rows; b += kRowBlock) {
    const std::size_t e = std::min(points.rows, b + kRowBlock);
    Eigen::MatrixXd x = scaled_block(m, points, b, e);
    if (m.components) {
      x.rowwise() -= mean;
      x = (x * axes.transpose()).eval();
    }
    for (std::size_t i = b; i < e; ++i)
      for (std::size_t j = 0; j < out.cols; ++j)
        out.row(i)[j] =
            static_cast<float>(x(static_cast<Eigen::Index>(i - b), static_cast<Eigen::Index>(j)));
  }
  return out;
}

}  // namespace unfurl
