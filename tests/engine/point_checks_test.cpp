// The engine's one finiteness check (engine/detail/point_checks.*): one message shape,
// rows and columns counted from 0, every stage that reads points using it.
#include "engine/detail/point_checks.hpp"

#include <catch2/catch.hpp>
#include <cmath>
#include <limits>

#include "engine/error.hpp"
#include "engine/linear.hpp"
#include "engine/neighbours.hpp"
#include "engine/preprocess.hpp"
#include "engine/quality.hpp"

using namespace unfurl;

TEST_CASE("the finiteness check names the first bad row and column", "[point_checks]") {
  PointSet p(6, 3);
  CHECK_NOTHROW(detail::require_finite(p, "points"));
  p.row(4)[2] = std::numeric_limits<float>::infinity();
  p.row(5)[0] = std::nanf("");
  CHECK_THROWS_WITH(detail::require_finite(p, "points"),
                    "points: row 4, column 2 is not a finite number");
  // A block of rows further down a larger set counts from its first row.
  CHECK_THROWS_WITH(detail::require_finite({p.row(4), 6}, 3, "rows", 100),
                    "rows: row 100, column 2 is not a finite number");
  CHECK_THROWS_AS(detail::require_points(PointSet(0, 3), "map"), DataError);
}

TEST_CASE("every stage that reads points refuses NaN in the same words", "[point_checks]") {
  PointSet p(30, 3);
  for (std::size_t i = 0; i < p.rows; ++i)
    for (std::size_t j = 0; j < p.cols; ++j) p.row(i)[j] = static_cast<float>(i * (j + 1) % 7);
  p.row(9)[1] = std::nanf("");
  const std::string tail = ": row 9, column 1 is not a finite number";
  CHECK_THROWS_WITH(linear_map(p, {}), "linear map" + tail);
  CHECK_THROWS_WITH(fit_preprocess(p, {}), "points" + tail);
  CHECK_THROWS_WITH(build_neighbour_graph(p, {}), "points" + tail);
  const PointSet map(30, 2);
  CHECK_THROWS_WITH(neighbourhood_scores(p, map, {}), "quality input points" + tail);
}
