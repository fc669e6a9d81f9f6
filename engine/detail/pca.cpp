#include "engine/detail/pca.hpp"

#include <algorithm>

#include "engine/error.hpp"

namespace unfurl::detail {

Eigen::MatrixXd double_rows(const PointSet& points, std::size_t begin, std::size_t end) {
  using RowMajor = Eigen::Matrix<float, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>;
  const Eigen::Map<const RowMajor> x(points.row(begin), static_cast<Eigen::Index>(end - begin),
                                     static_cast<Eigen::Index>(points.cols));
  return x.cast<double>();
}

PcaFit fit_pca(std::size_t rows, std::size_t cols, const PcaRows& source, std::size_t components,
               AxisSign sign, StopToken stop) {
  if (rows == 0 || components < 1 || components > cols)
    throw InternalError("pca: " + std::to_string(components) + " components of " +
                        std::to_string(rows) + " x " + std::to_string(cols) + " points");
  const auto d = static_cast<Eigen::Index>(cols);
  Eigen::VectorXd mean = Eigen::VectorXd::Zero(d);
  for (std::size_t b = 0; b < rows; b += kPcaRowBlock) {
    stop.check("pca");
    mean += source(b, std::min(rows, b + kPcaRowBlock)).colwise().sum().transpose();
  }
  mean /= static_cast<double>(rows);
  Eigen::MatrixXd cov = Eigen::MatrixXd::Zero(d, d);
  for (std::size_t b = 0; b < rows; b += kPcaRowBlock) {
    stop.check("pca");
    Eigen::MatrixXd x = source(b, std::min(rows, b + kPcaRowBlock));
    x.rowwise() -= mean.transpose();
    cov.selfadjointView<Eigen::Lower>().rankUpdate(x.transpose());
  }
  cov = cov.selfadjointView<Eigen::Lower>();
  cov /= static_cast<double>(rows);
  const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> eig(cov);
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
