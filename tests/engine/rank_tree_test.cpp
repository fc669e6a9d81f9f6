#include "engine/detail/rank_tree.hpp"

#include <algorithm>
#include <catch2/catch.hpp>
#include <cmath>

#include "engine/quality.hpp"
#include "engine/random.hpp"
#include "tests/engine/same_scores.hpp"

namespace {

using namespace unfurl;

// Points on a coarse 3-D grid, so many distances tie exactly, with repeated rows, a far
// outlier and a large spread of scales. Common practice, no source.
PointSet grid_points(std::size_t n, std::uint64_t seed) {
  Random rng(seed);
  PointSet p(n, 3);
  for (std::size_t i = 0; i < n; ++i)
    for (std::size_t c = 0; c < 3; ++c)
      p.values[i * 3 + c] = static_cast<float>(std::floor(6.0 * rng.uniform()) * 0.75);
  for (std::size_t c = 0; c < 3; ++c) p.values[(n - 1) * 3 + c] = 1e6f;  // far away
  return p;
}

PointSet grid_map(const PointSet& input, std::uint64_t seed) {
  Random rng(seed);
  PointSet m(input.rows, 2);
  for (std::size_t i = 0; i < input.rows; ++i) {
    m.values[i * 2] = std::floor(input.row(i)[0] + input.row(i)[2] + 2.0 * rng.uniform());
    m.values[i * 2 + 1] = std::floor(input.row(i)[1] * 2.0);
  }
  return m;
}

}  // namespace

TEST_CASE("k-d tree neighbours and ranks equal a stable sort of the distance row", "[quality]") {
  // Oracle: every squared distance in double (exact_squared_to, the scan's bits) and a stable
  // sort of the row, ties to the lower row (engine/detail/neighbour_scan.hpp's convention).
  const PointSet points = grid_points(900, 4);
  const detail::RankTree tree(points);
  std::vector<detail::Ranked> nearest;
  for (std::size_t self : {0u, 1u, 17u, 450u, 898u, 899u}) {
    std::vector<double> q(points.row(self), points.row(self) + 3);
    std::vector<detail::Ranked> row;
    for (std::size_t l = 0; l < points.rows; ++l)
      if (l != self)
        row.push_back({detail::exact_squared_to(q.data(), points.row(l), 3), NodeId(l)});
    std::stable_sort(row.begin(), row.end(),
                     [](const auto& a, const auto& b) { return a.dist2 < b.dist2; });
    tree.nearest(self, 40, nearest);
    REQUIRE(nearest.size() == 40);
    for (std::size_t p = 0; p < 40; ++p) {
      CHECK(nearest[p].id == row[p].id);
      CHECK(nearest[p].dist2 == row[p].dist2);
    }
    for (std::size_t p : {0u, 5u, 39u, 40u, 300u, 897u}) CHECK(tree.rank(self, row[p].id) == p + 1);
  }
}

TEST_CASE("scores from k-d tree counts equal the direct double scan's", "[quality]") {
  // Oracle: the direct double scan (tests/engine/same_scores.hpp).
  const PointSet input = grid_points(1500, 7);
  testing::check_same_scores(input, grid_map(input, 8), {1, 4, 12, 100}, 200);
}
