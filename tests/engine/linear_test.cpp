#include "engine/linear.hpp"

#include <omp.h>

#include <catch2/catch.hpp>
#include <cmath>

#include "engine/error.hpp"
#include "engine/random.hpp"
#include "tests/test_util.hpp"

namespace {

// Points a u + b v + c in R^4, u and v orthonormal: the analytic answer is that PCA returns
// (a, b) up to sign and shift, with variances var(a) > var(b) and zero for the rest.
unfurl::PointSet plane(std::size_t n, std::vector<double>& a, std::vector<double>& b) {
  const double u[4] = {0.5, 0.5, 0.5, 0.5}, v[4] = {0.5, -0.5, 0.5, -0.5};
  unfurl::Random rng(3);
  unfurl::PointSet p(n, 4);
  a.resize(n);
  b.resize(n);
  for (std::size_t i = 0; i < n; ++i) {
    a[i] = 4.0 * rng.normal();
    b[i] = rng.normal();
    for (std::size_t c = 0; c < 4; ++c)
      p.row(i)[c] = static_cast<float>(a[i] * u[c] + b[i] * v[c] + 10.0 * c);
  }
  return p;
}

double variance(const std::vector<double>& x) {
  double mean = 0.0, sum = 0.0;
  for (double v : x) mean += v;
  mean /= static_cast<double>(x.size());
  for (double v : x) sum += (v - mean) * (v - mean);
  return sum / static_cast<double>(x.size());  // divisor N, engine/detail/pca.hpp's convention
}

}  // namespace

TEST_CASE("PCA of points on a plane recovers the plane's coordinates", "[linear]") {
  std::vector<double> a, b;
  const auto p = plane(3000, a, b);
  unfurl::LinearOptions o;
  const auto r = unfurl::linear_map(p, o);
  REQUIRE(r.spectrum.size() == 4);
  CHECK(r.spectrum[0] == Approx(variance(a)).epsilon(1e-3));
  CHECK(r.spectrum[1] == Approx(variance(b)).epsilon(1e-3));
  CHECK(std::abs(r.spectrum[2]) < 1e-6 * r.spectrum[0]);
  CHECK(r.summary.explained == Approx(1.0).epsilon(1e-6));
  std::vector<double> truth(2 * a.size());
  for (std::size_t i = 0; i < a.size(); ++i) {
    truth[2 * i] = a[i];
    truth[2 * i + 1] = b[i];
  }
  CHECK(unfurl::test::procrustes_disparity(r.coords.values, truth, a.size(), 2) < 1e-10);
}

TEST_CASE("PCA bytes do not depend on the thread count", "[linear]") {
  std::vector<double> a, b;
  const auto p = plane(20000, a, b);
  const int before = omp_get_max_threads();
  omp_set_num_threads(1);
  const auto one = unfurl::linear_map(p, {});
  omp_set_num_threads(2);
  const auto two = unfurl::linear_map(p, {});
  omp_set_num_threads(before);
  CHECK(one.coords.values == two.coords.values);
  CHECK(one.spectrum == two.spectrum);
}

TEST_CASE("PCA refuses bad options and values", "[linear]") {
  unfurl::PointSet p(10, 3);
  unfurl::LinearOptions o;
  o.dims = 4;
  CHECK_THROWS_WITH(unfurl::linear_map(p, o),
                    Catch::Contains("LinearOptions.dims: must be at most"));
  o.dims = 2;
  p.row(4)[1] = std::nanf("");
  CHECK_THROWS_WITH(unfurl::linear_map(p, o), Catch::Contains("row 4, column 1"));
  CHECK_THROWS_AS(unfurl::linear_map(unfurl::PointSet(1, 3), o), unfurl::DataError);
}
