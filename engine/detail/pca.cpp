#include "engine/detail/pca.hpp"

#include <algorithm>

#include <Spectra/MatOp/DenseSymMatProd.h>

#include "engine/detail/eigen_top.hpp"
#include "engine/error.hpp"

namespace unfurl::detail {

Eigen::MatrixXd double_rows(const PointSet& points, std::size_t begin, std::size_t end) {
  using RowMajor = Eigen::Matrix<float, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>;
  const Eigen::Map<const RowMajor> x(points.row(begin), static_cast<Eigen::Index>(end - begin),
                                     static_cast<Eigen::Index>(points.cols));
  return x.cast<double>();
}

namespace {

struct Moments {
  Eigen::VectorXd mean;
  Eigen::MatrixXd cov;  // both triangles
};

// The centre and the population covariance of the convention in pca.hpp.
Moments moments(std::size_t rows, std::size_t cols, const PcaRows& source, std::size_t components,
                StopToken stop) {
  if (rows == 0 || components < 1 || components > cols)
    throw InternalError("pca: " + std::to_string(components) + " components of " +
                        std::to_string(rows) + " x " + std::to_string(cols) + " points");
  const auto d = static_cast<Eigen::Index>(cols);
  Moments m{Eigen::VectorXd::Zero(d), Eigen::MatrixXd::Zero(d, d)};
  for (std::size_t b = 0; b < rows; b += kPcaRowBlock) {
    stop.check("pca");
    m.mean += source(b, std::min(rows, b + kPcaRowBlock)).colwise().sum().transpose();
  }
  m.mean /= static_cast<double>(rows);
  for (std::size_t b = 0; b < rows; b += kPcaRowBlock) {
    stop.check("pca");
    Eigen::MatrixXd x = source(b, std::min(rows, b + kPcaRowBlock));
    x.rowwise() -= m.mean.transpose();
    m.cov.selfadjointView<Eigen::Lower>().rankUpdate(x.transpose());
  }
  m.cov = m.cov.selfadjointView<Eigen::Lower>();
  m.cov /= static_cast<double>(rows);
  return m;
}

}  // namespace

PcaFit fit_pca(std::size_t rows, std::size_t cols, const PcaRows& source, std::size_t components,
               AxisSign sign, StopToken stop) {
  const auto d = static_cast<Eigen::Index>(cols);
  const Moments mo = moments(rows, cols, source, components, stop);
  const Eigen::VectorXd& mean = mo.mean;
  const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> eig(mo.cov);
  if (eig.info() != Eigen::Success) throw InternalError("pca: eigen decomposition failed");

  PcaFit fit;
  fit.cols = cols;
  fit.components = components;
  fit.mean.assign(mean.data(), mean.data() + d);
  for (Eigen::Index c = d - 1; c >= 0; --c) fit.variances.push_back(eig.eigenvalues()(c));
  fit.axes.resize(components * cols);
  double kept = 0.0;
  for (std::size_t c = 0; c < components; ++c) {
    Eigen::VectorXd axis = eig.eigenvectors().col(d - 1 - static_cast<Eigen::Index>(c));
    if (sign == AxisSign::largest_entry_positive) {
      Eigen::Index big;
      axis.cwiseAbs().maxCoeff(&big);
      if (axis(big) < 0) axis = -axis;
    }
    std::copy(axis.data(), axis.data() + d,
              fit.axes.begin() + static_cast<std::ptrdiff_t>(c * cols));
    kept += std::max(0.0, fit.variances[c]);
  }
  const double total = std::max(0.0, eig.eigenvalues().sum());
  fit.kept_share = total > 0.0 ? kept / total : 1.0;
  return fit;
}

std::vector<std::size_t> sample_rows(std::size_t rows, std::size_t limit) {
  const std::size_t s = std::min(rows, limit);
  std::vector<std::size_t> at(s);
  // Exact in 64 bits for rows and limit below 2^32 each.
  for (std::size_t i = 0; i < s; ++i) at[i] = i * rows / s;
  return at;
}

PcaFit fit_pca_top(std::size_t rows, std::size_t cols, const PcaRows& source,
                   std::size_t components, StopToken stop) {
  const Moments mo = moments(rows, cols, source, components, stop);
  const auto d = static_cast<Eigen::Index>(cols);
  PcaFit fit;
  fit.cols = cols;
  fit.components = components;
  fit.mean.assign(mo.mean.data(), mo.mean.data() + d);
  Eigen::MatrixXd vectors;
  std::vector<double> values;
  // Lanczos needs room for a Krylov basis larger than the pairs wanted; a small covariance
  // is solved whole.
  if (cols <= 2 * components + 1) {
    EigenPairs e = dense_top(mo.cov, components);
    vectors = std::move(e.vectors), values = std::move(e.values);
  } else {
    Spectra::DenseSymMatProd<double> op(mo.cov);
    IterativeSettings s;
    s.negative_end = false;
    s.tolerance = 1e-12;
    EigenPairs e = iterative_top(op, components, s);
    if (!e.converged || e.values.size() != components)
      throw InternalError("pca: the top " + std::to_string(components) + " axes did not converge");
    vectors = std::move(e.vectors), values = std::move(e.values);
  }
  fix_signs(vectors);
  fit.axes.resize(components * cols);
  double kept = 0.0;
  for (std::size_t c = 0; c < components; ++c) {
    const auto col = vectors.col(static_cast<Eigen::Index>(c));
    std::copy(col.data(), col.data() + d, fit.axes.begin() + static_cast<std::ptrdiff_t>(c * cols));
    fit.variances.push_back(values[c]);
    kept += std::max(0.0, values[c]);
  }
  const double total = std::max(0.0, mo.cov.trace());
  fit.kept_share = total > 0.0 ? std::min(1.0, kept / total) : 1.0;
  return fit;
}

Eigen::MatrixXd project_rows(Eigen::MatrixXd block, std::span<const double> mean,
                             std::span<const double> axes, std::size_t components) {
  const auto d = static_cast<Eigen::Index>(mean.size());
  if (block.cols() != d || axes.size() != components * mean.size())
    throw InternalError("pca: projecting " + std::to_string(block.cols()) + " columns with " +
                        std::to_string(components) + " axes of " + std::to_string(mean.size()));
  const Eigen::Map<const Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>> a(
      axes.data(), static_cast<Eigen::Index>(components), d);
  block.rowwise() -= Eigen::Map<const Eigen::RowVectorXd>(mean.data(), d);
  return block * a.transpose();
}

}  // namespace unfurl::detail
