// The "equal up to rotation, reflection and scale" helper of tests/test_util.hpp, checked
// against the properties of the Procrustes disparity (Gower 1975; scipy.spatial.procrustes
// documents the same definition).
#include <Eigen/Dense>
#include <catch2/catch.hpp>
#include <cmath>

#include "engine/random.hpp"
#include "tests/test_util.hpp"

TEST_CASE("procrustes disparity is zero after rotation, reflection, scale and shift",
          "[test_util]") {
  unfurl::Random rng(1);
  const std::size_t n = 40;
  std::vector<double> a(2 * n), b(2 * n), c(2 * n);
  const double angle = 0.7, scale = 3.5;
  for (std::size_t i = 0; i < n; ++i) {
    a[2 * i] = rng.normal();
    a[2 * i + 1] = rng.normal();
    const double x = a[2 * i], y = a[2 * i + 1];
    b[2 * i] = scale * (std::cos(angle) * x - std::sin(angle) * y) + 5.0;
    b[2 * i + 1] = -scale * (std::sin(angle) * x + std::cos(angle) * y) - 2.0;  // reflected
    c[2 * i] = rng.normal();
    c[2 * i + 1] = rng.normal();
  }
  CHECK(unfurl::test::procrustes_disparity(a, b, n, 2) < 1e-12);
  // Unrelated configurations are far apart, and the disparity is symmetric (both sides are
  // standardised to unit norm before the fit).
  const double apart = unfurl::test::procrustes_disparity(a, c, n, 2);
  CHECK(apart > 0.5);
  CHECK(unfurl::test::procrustes_disparity(c, a, n, 2) == Approx(apart));
}

TEST_CASE("procrustes disparity of a known perturbation", "[test_util]") {
  // Square corners against the same square with one corner moved: after standardising, a
  // 1-D closed form is hard to state, so compare with the residual of the explicit optimal
  // fit (rotation from the SVD, least-squares scale) computed here the long way.
  const std::vector<double> a{0, 0, 1, 0, 1, 1, 0, 1};
  const std::vector<double> b{0, 0, 1, 0, 1.3, 1.2, 0, 1};
  Eigen::MatrixXd x(4, 2), y(4, 2);
  for (int i = 0; i < 4; ++i)
    for (int k = 0; k < 2; ++k) {
      x(i, k) = a[2 * i + k];
      y(i, k) = b[2 * i + k];
    }
  x.rowwise() -= x.colwise().mean();
  y.rowwise() -= y.colwise().mean();
  x /= x.norm();
  y /= y.norm();
  const Eigen::JacobiSVD<Eigen::MatrixXd> svd(y.transpose() * x,
                                              Eigen::ComputeFullU | Eigen::ComputeFullV);
  const Eigen::MatrixXd r = svd.matrixU() * svd.matrixV().transpose();
  const double s = (y * r).cwiseProduct(x).sum();
  const double residual = (x - s * y * r).squaredNorm();
  CHECK(residual > 1e-3);
  CHECK(unfurl::test::procrustes_disparity(a, b, 4, 2) == Approx(residual).epsilon(1e-9));
}
