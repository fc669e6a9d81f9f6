#include "engine/preprocess.hpp"

#include <Eigen/Dense>
#include <algorithm>
#include <catch2/catch.hpp>
#include <cmath>

#include "engine/error.hpp"
#include "engine/random.hpp"

using namespace unfurl;

namespace {

PointSet gaussian(std::size_t n, std::size_t d, std::uint64_t seed) {
  Random rng(seed);
  PointSet p(n, d);
  for (std::size_t i = 0; i < n; ++i)
    for (std::size_t j = 0; j < d; ++j)
      p.row(i)[j] = static_cast<float>(3.0 * j + (1.0 + j) * rng.normal());
  return p;
}

}  // namespace

TEST_CASE("standard scaling gives mean 0 and population deviation 1", "[preprocess]") {
  auto p = gaussian(500, 4, 1);
  for (std::size_t i = 0; i < p.rows; ++i) p.row(i)[2] = 7.0f;  // a constant column
  PreprocessOptions o;
  o.scale = Scale::standard;
  const auto m = fit_preprocess(p, o);
  const auto x = apply_preprocess(m, p);
  for (std::size_t j = 0; j < 4; ++j) {
    double mean = 0, sq = 0;
    for (std::size_t i = 0; i < x.rows; ++i) mean += x.row(i)[j];
    mean /= x.rows;
    for (std::size_t i = 0; i < x.rows; ++i) sq += std::pow(x.row(i)[j] - mean, 2);
    CHECK(mean == Approx(0.0).margin(1e-5));
    CHECK(std::sqrt(sq / x.rows) == Approx(j == 2 ? 0.0 : 1.0).margin(1e-5));
  }
  REQUIRE(m.warnings.size() == 1);
  CHECK(m.warnings[0] == "column 2: constant, centred but not scaled");
}

TEST_CASE("robust scaling uses the median and the interquartile range", "[preprocess]") {
  // 1..9 in one column: median 5, quartiles 3 and 7 by linear interpolation (the numpy
  // percentile default; arithmetic by hand).
  PointSet p(9, 1);
  for (std::size_t i = 0; i < 9; ++i) p.row(i)[0] = static_cast<float>(9 - i);
  PreprocessOptions o;
  o.scale = Scale::robust;
  const auto m = fit_preprocess(p, o);
  CHECK(m.centre[0] == 5.0);
  CHECK(m.spread[0] == 4.0);
  // 10 values: positions 2.25, 4.5, 6.75 -> 3.25, 5.5, 7.75 for the values 1..10.
  PointSet q(10, 1);
  for (std::size_t i = 0; i < 10; ++i) q.row(i)[0] = static_cast<float>(i + 1);
  const auto m2 = fit_preprocess(q, o);
  CHECK(m2.centre[0] == Approx(5.5));
  CHECK(m2.spread[0] == Approx(7.75 - 3.25));
}

TEST_CASE("PCA axes satisfy the eigen equation of the covariance", "[preprocess]") {
  const auto p = gaussian(800, 6, 4);
  PreprocessOptions o;
  o.pca = 3;
  const auto m = fit_preprocess(p, o);
  // Oracle: the covariance by a plain double loop, and the residual |C v - lambda v|
  // (the eigen equation itself; common practice, no source).
  Eigen::MatrixXd c = Eigen::MatrixXd::Zero(6, 6);
  Eigen::VectorXd mean = Eigen::VectorXd::Zero(6);
  for (std::size_t i = 0; i < p.rows; ++i)
    for (int j = 0; j < 6; ++j) mean(j) += p.row(i)[j] / double(p.rows);
  for (std::size_t i = 0; i < p.rows; ++i)
    for (int a = 0; a < 6; ++a)
      for (int b = 0; b < 6; ++b)
        c(a, b) += (p.row(i)[a] - mean(a)) * (p.row(i)[b] - mean(b)) / double(p.rows);
  REQUIRE(m.components == 3);
  for (int k = 0; k < 3; ++k) {
    const Eigen::Map<const Eigen::VectorXd> v(m.axes.data() + 6 * k, 6);
    CHECK(v.norm() == Approx(1.0).epsilon(1e-12));
    CHECK((c * v - m.variances[k] * v).norm() <= 1e-9 * c.norm());
    if (k > 0) CHECK(m.variances[k] <= m.variances[k - 1]);
  }
  CHECK(m.variance_kept == Approx((m.variances[0] + m.variances[1] + m.variances[2]) / c.trace()));
  // The projection of the fitting data has the axis variances as column variances.
  const auto x = apply_preprocess(m, p);
  REQUIRE(x.cols == 3);
  for (std::size_t k = 0; k < 3; ++k) {
    double s = 0, sq = 0;
    for (std::size_t i = 0; i < x.rows; ++i)
      s += x.row(i)[k], sq += double(x.row(i)[k]) * x.row(i)[k];
    CHECK(s / x.rows == Approx(0.0).margin(1e-4));
    CHECK(sq / x.rows == Approx(m.variances[k]).epsilon(1e-5));
  }
}

TEST_CASE("a fitted model re-applies to new points identically", "[preprocess]") {
  const auto p = gaussian(300, 5, 9);
  PreprocessOptions o;
  o.scale = Scale::robust;
  o.metric = Metric::cosine;
  o.pca = 2;
  const auto m = fit_preprocess(p, o);
  const auto all = apply_preprocess(m, p);
  PointSet tail(10, 5);
  std::copy_n(p.row(290), 50, tail.values.begin());
  const auto part = apply_preprocess(m, tail);
  for (std::size_t i = 0; i < 10; ++i)
    for (std::size_t j = 0; j < 2; ++j) CHECK(part.row(i)[j] == all.row(290 + i)[j]);
}

TEST_CASE("cosine rows have unit length and zero rows are refused", "[preprocess]") {
  auto p = gaussian(50, 3, 2);
  PreprocessOptions o;
  o.metric = Metric::cosine;
  const auto x = apply_preprocess(fit_preprocess(p, o), p);
  for (std::size_t i = 0; i < x.rows; ++i)
    CHECK(std::hypot(x.row(i)[0], x.row(i)[1], x.row(i)[2]) == Approx(1.0).epsilon(1e-6));
  std::fill_n(p.row(4), 3, 0.0f);
  CHECK_THROWS_WITH(fit_preprocess(p, o), Catch::StartsWith("points: row 4 is all zeros"));
  o.metric = Metric::euclidean;
  o.pca = 4;
  CHECK_THROWS_AS(fit_preprocess(p, o), OptionError);
  p.row(3)[1] = INFINITY;
  o.pca = 0;
  CHECK_THROWS_WITH(fit_preprocess(p, o), "points: row 3, column 1 is not a finite number");
  PointSet wrong(2, 4);
  CHECK_THROWS_AS(apply_preprocess(fit_preprocess(gaussian(5, 3, 1), o), wrong), DataError);
}
