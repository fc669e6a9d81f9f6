#include "engine/detail/eigen_top.hpp"

#include <cmath>

namespace unfurl::detail {

EigenPairs dense_top(const Eigen::MatrixXd& matrix, std::size_t m) {
  Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> solver(matrix);
  const Eigen::VectorXd& ascending = solver.eigenvalues();
  const auto n = static_cast<std::size_t>(ascending.size());
  EigenPairs out;
  out.complete = true;
  out.from_top = n;
  out.spectrum.resize(n);
  for (std::size_t i = 0; i < n; ++i)
    out.spectrum[i] = ascending[static_cast<Eigen::Index>(n - 1 - i)];
  const std::size_t kept = std::min(m, n);
  out.values.assign(out.spectrum.begin(), out.spectrum.begin() + static_cast<std::ptrdiff_t>(kept));
  out.vectors.resize(static_cast<Eigen::Index>(n), static_cast<Eigen::Index>(kept));
  for (std::size_t k = 0; k < kept; ++k)
    out.vectors.col(static_cast<Eigen::Index>(k)) =
        solver.eigenvectors().col(static_cast<Eigen::Index>(n - 1 - k));
  return out;
}

void fix_signs(Eigen::MatrixXd& vectors) {
  for (Eigen::Index k = 0; k < vectors.cols(); ++k) {
    Eigen::Index at = 0;
    double largest = -1.0;
    for (Eigen::Index i = 0; i < vectors.rows(); ++i) {
      const double magnitude = std::abs(vectors(i, k));
      if (magnitude > largest) {  // strict: ties keep the lowest index
        largest = magnitude;
        at = i;
      }
    }
    if (vectors(at, k) < 0.0) vectors.col(k) = -vectors.col(k);
  }
}

}  // namespace unfurl::detail
