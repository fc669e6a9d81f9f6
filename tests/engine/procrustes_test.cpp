// The "equal up to rotation, reflection and scale" helper of tests/test_util.hpp, checked
// against the properties of the Procrustes disparity (Gower 1975; scipy.spatial.procrustes
// documents the same definition).
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
  // Square corners against the same square with one corner moved, against a closed form
  // rather than a second SVD (an Eigen SVD here made this file cost 82 CPU-s to compile
  // under the sanitizers, 4 without; bench/RESULTS.md "CI time"). After centring
  // and scaling both to unit norm, the optimal rotation (reflections allowed) and scale leave
  // 1 - (s1 + s2)^2, s1, s2 the singular values of M = Y^T X (Gower 1975, as above). For a
  // 2 x 2 M, s1^2 + s2^2 = |M|_F^2 and s1 s2 = |det M|, so (s1 + s2)^2 = |M|_F^2 + 2 |det M|
  // (analytic, from the two definitions).
  const std::vector<double> a{0, 0, 1, 0, 1, 1, 0, 1};
  const std::vector<double> b{0, 0, 1, 0, 1.3, 1.2, 0, 1};
  auto standardised = [](std::vector<double> v) {
    double mean[2] = {0, 0};
    for (std::size_t i = 0; i < 4; ++i)
      for (std::size_t k = 0; k < 2; ++k) mean[k] += v[2 * i + k] / 4.0;
    double norm = 0.0;
    for (std::size_t i = 0; i < 8; ++i) {
      v[i] -= mean[i % 2];
      norm += v[i] * v[i];
    }
    for (double& value : v) value /= std::sqrt(norm);
    return v;
  };
  const std::vector<double> x = standardised(a), y = standardised(b);
  double m[2][2] = {{0, 0}, {0, 0}};  // M = Y^T X
  for (std::size_t i = 0; i < 4; ++i)
    for (std::size_t r = 0; r < 2; ++r)
      for (std::size_t c = 0; c < 2; ++c) m[r][c] += y[2 * i + r] * x[2 * i + c];
  const double frobenius2 =
      m[0][0] * m[0][0] + m[0][1] * m[0][1] + m[1][0] * m[1][0] + m[1][1] * m[1][1];
  const double det = m[0][0] * m[1][1] - m[0][1] * m[1][0];
  const double residual = 1.0 - (frobenius2 + 2.0 * std::abs(det));
  CHECK(residual > 1e-3);
  CHECK(unfurl::test::procrustes_disparity(a, b, 4, 2) == Approx(residual).epsilon(1e-9));
}
