#include "tests/test_util.hpp"

#include <Eigen/Dense>

namespace unfurl::test {

double procrustes_disparity_rows(const std::vector<double>& a, const std::vector<double>& b,
                                 std::size_t n, std::size_t m) {
  const auto rows = static_cast<Eigen::Index>(n), cols = static_cast<Eigen::Index>(m);
  using RowMajor = Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>;
  Eigen::MatrixXd x = Eigen::Map<const RowMajor>(a.data(), rows, cols);
  Eigen::MatrixXd y = Eigen::Map<const RowMajor>(b.data(), rows, cols);
  x.rowwise() -= x.colwise().mean();
  y.rowwise() -= y.colwise().mean();
  x /= x.norm();
  y /= y.norm();
  const Eigen::JacobiSVD<Eigen::MatrixXd> svd(x.transpose() * y);
  const double s = svd.singularValues().sum();
  return std::max(0.0, 1.0 - s * s);
}

}  // namespace unfurl::test
