#include "engine/detail/rank_products.hpp"

#include <algorithm>
#include <catch2/catch.hpp>
#include <cmath>
#include <numeric>

#include "engine/quality.hpp"
#include "engine/random.hpp"
#include "tests/engine/same_scores.hpp"

namespace {

using namespace unfurl;

// Points where float32 products cancel badly and ties abound: every coordinate near 3000 with
// a spread of about 0.05 (|x|^2 ~ 6e8 against squared distances ~ 0.1), coordinates on a grid
// of 1/256 of the spread (exactly equal distances), a block of points offset + 1 + h e_i at equal
// distances from one another (more of them than the products keep as candidates, so those
// rows fall back to the exact scan), and repeated rows. Common practice, no source.
PointSet hard_points(std::size_t n, std::size_t d, std::uint64_t seed) {
  Random rng(seed);
  PointSet p(n, d);
  const float offset = 3000.0f, step = 0.05f / 256.0f;
  for (std::size_t i = 0; i < n; ++i)
    for (std::size_t c = 0; c < d; ++c)
      p.values[i * d + c] = offset + step * std::round(256.0 * rng.normal());
  for (std::size_t i = 0; i < d && i < n; ++i)  // an equidistant block away from the rest
    for (std::size_t c = 0; c < d; ++c) p.values[i * d + c] = offset + (c == i ? 1.25f : 1.0f);
  for (std::size_t i = d; i + 1 < n && i < d + 60; i += 2)  // repeated rows
    std::copy_n(p.row(i + 1), d, p.values.data() + i * d);
  return p;
}

// A 2-D map that keeps part of the input's order: two coordinates plus noise, on a grid.
PointSet rough_map(const PointSet& input, std::uint64_t seed) {
  Random rng(seed);
  PointSet m(input.rows, 2);
  for (std::size_t i = 0; i < input.rows; ++i)
    for (std::size_t c = 0; c < 2; ++c)
      m.values[i * 2 + c] = std::round(64.0 * (input.row(i)[c] - 3000.0f + 0.02 * rng.normal()));
  return m;
}

}  // namespace

TEST_CASE("float32 product ranks equal the exact double ranks", "[quality]") {
  // Oracle: every squared distance in double, in column order, and a stable sort of each row
  // (ties to the lower row), the ranking convention of engine/detail/neighbour_scan.hpp.
  const PointSet points = hard_points(300, 40, 11);
  REQUIRE(detail::products_serve(points));
  const detail::ProductRanker ranker(points);
  const std::vector<std::uint32_t> selves = {0, 5, 39, 40, 41, 77, 150, 299};
  std::vector<std::vector<NodeId>> others(selves.size());
  Random rng(3);
  for (std::size_t b = 0; b < selves.size(); ++b) {  // nine distinct rows other than the query
    std::vector<NodeId> all;
    for (NodeId l = 0; l < points.rows; ++l)
      if (l != selves[b]) all.push_back(l);
    for (std::size_t t = 0; t < 9; ++t)
      std::swap(all[t], all[t + static_cast<std::size_t>(rng.uniform() * (all.size() - t))]);
    others[b].assign(all.begin(), all.begin() + 9);
  }
  std::vector<std::vector<detail::Ranked>> nearest;
  std::vector<std::vector<std::size_t>> ranks;
  const std::size_t count = 7;
  ranker.rank(selves, count, others, nearest, ranks);
  for (std::size_t b = 0; b < selves.size(); ++b) {
    const std::size_t self = selves[b];
    std::vector<double> q(points.row(self), points.row(self) + points.cols);
    std::vector<detail::Ranked> row;
    for (std::size_t l = 0; l < points.rows; ++l)
      if (l != self)
        row.push_back({detail::exact_squared_to(q.data(), points.row(l), points.cols),
                       static_cast<NodeId>(l)});
    std::stable_sort(row.begin(), row.end(),
                     [](const auto& a, const auto& c) { return a.dist2 < c.dist2; });
    REQUIRE(nearest[b].size() == count);
    for (std::size_t p = 0; p < count; ++p) {
      CHECK(nearest[b][p].id == row[p].id);
      CHECK(nearest[b][p].dist2 == row[p].dist2);
    }
    for (std::size_t p = 0; p < others[b].size(); ++p) {
      const auto at =
          std::find_if(row.begin(), row.end(), [&](const auto& r) { return r.id == others[b][p]; });
      REQUIRE(at != row.end());
      CHECK(ranks[b][p] == static_cast<std::size_t>(at - row.begin()) + 1);
    }
  }
}

TEST_CASE("scores from float32 products equal the direct double scan's", "[quality]") {
  // Oracle: the direct double scan (tests/engine/same_scores.hpp).
  const PointSet input = hard_points(700, 64, 5);
  REQUIRE(detail::products_serve(input));
  testing::check_same_scores(input, rough_map(input, 6), {1, 5, 12, 30}, 150);
}
