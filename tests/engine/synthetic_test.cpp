#include "engine/synthetic.hpp"

#include <catch2/catch.hpp>
#include <cmath>

namespace {

// Arc length by composite Simpson's rule on |d/dt (t cos t, t sin t)| = sqrt(1 + t^2): the
// independent numerical integration the closed form is checked against.
double simpson_arc_length(double t, int intervals) {
  const double h = t / intervals;
  double sum = 0.0;
  for (int i = 0; i <= intervals; ++i) {
    const double x = i * h;
    const double w = (i == 0 || i == intervals) ? 1.0 : (i % 2 ? 4.0 : 2.0);
    sum += w * std::sqrt(1.0 + x * x);
  }
  return sum * h / 3.0;
}

}  // namespace

TEST_CASE("swiss roll arc length matches numerical integration", "[synthetic]") {
  for (double t : {1.5 * M_PI, 3.0 * M_PI, 4.5 * M_PI, 0.3}) {
    CHECK(unfurl::swiss_roll_arc_length(t) == Approx(simpson_arc_length(t, 20000)).epsilon(1e-10));
  }
  // Values at the ends of the roll, from DESIGN.md section 6 (computed from the closed form
  // there; the Simpson check above is the independent one).
  CHECK(unfurl::swiss_roll_arc_length(1.5 * M_PI) == Approx(12.477759).epsilon(1e-7));
  CHECK(unfurl::swiss_roll_arc_length(4.5 * M_PI) == Approx(101.851034).epsilon(1e-7));
}

TEST_CASE("swiss roll points lie on the spiral their truth names", "[synthetic]") {
  const auto s = unfurl::swiss_roll(500, 7);
  REQUIRE(s.points.rows == 500);
  REQUIRE(s.points.cols == 3);
  for (std::size_t i = 0; i < s.points.rows; ++i) {
    const float* p = s.points.row(i);
    const double t = std::hypot(p[0], p[2]);  // radius equals t on this spiral
    REQUIRE(t >= 1.5 * M_PI - 1e-4);
    REQUIRE(t <= 4.5 * M_PI + 1e-4);
    CHECK(unfurl::swiss_roll_arc_length(t) == Approx(s.truth.row(i)[0]).epsilon(1e-5));
    CHECK(p[1] == s.truth.row(i)[1]);
  }
}

TEST_CASE("generators are reproducible from their seed", "[synthetic]") {
  CHECK(unfurl::ocean_buoys(50, 3).points.values == unfurl::ocean_buoys(50, 3).points.values);
  CHECK(unfurl::ocean_buoys(50, 3).points.values != unfurl::ocean_buoys(50, 4).points.values);
  CHECK(unfurl::s_curve(50, 3).points.values == unfurl::s_curve(50, 3).points.values);
}

TEST_CASE("s-curve points follow their parametrisation", "[synthetic]") {
  const auto s = unfurl::s_curve(2000, 11);
  for (std::size_t i = 0; i < s.points.rows; ++i) {
    const float* p = s.points.row(i);
    const double t = s.truth.row(i)[0];
    CHECK(std::abs(t) <= 1.5 * M_PI + 1e-6);
    CHECK(p[0] == Approx(std::sin(t)).margin(1e-6));
  }
}
