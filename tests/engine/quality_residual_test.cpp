// The residual variance from geodesic rows of the graph itself (engine/quality_residual.*):
// every pair up to a size, random source rows beyond.
#include <omp.h>

#include <catch2/catch.hpp>
#include <cmath>
#include <numeric>

#include "engine/error.hpp"
#include "engine/geodesic.hpp"
#include "engine/neighbours.hpp"
#include "engine/quality_residual.hpp"
#include "engine/synthetic.hpp"

namespace {

struct Roll {
  unfurl::NeighbourGraph graph;
  unfurl::PointSet truth;
};

Roll roll(std::size_t n, std::uint64_t seed) {
  const auto set = unfurl::swiss_roll(n, seed);
  unfurl::GraphOptions go;
  go.neighbourhood = unfurl::NearestK{10};
  auto g = unfurl::build_neighbour_graph(set.points, go);
  REQUIRE(g.graph.nodes() == n);  // no duplicates: node v is point v
  return {std::move(g.graph), set.truth};
}

// 1 - R^2 over every unordered pair, written out directly with plain sums (agreeing to about
// 1e-8 with the engine's cancellation-free pairwise moments) (Pearson's R; Tenenbaum et al.
// 2000, note 42) from the all-pairs rows: the reference for the sampled curve.
double all_pairs(const unfurl::DistanceRows& d, const unfurl::PointSet& map, std::size_t dims) {
  double n = 0, sx = 0, sy = 0, sxx = 0, syy = 0, sxy = 0;
  for (std::size_t i = 0; i < d.rows; ++i)
    for (std::size_t j = i + 1; j < d.cols; ++j) {
      double q = 0;
      for (std::size_t c = 0; c < dims; ++c) {
        const double t = double(map.row(i)[c]) - map.row(j)[c];
        q += t * t;
      }
      const double x = d.row(i)[j], y = std::sqrt(q);
      n += 1, sx += x, sy += y, sxx += x * x, syy += y * y, sxy += x * y;
    }
  const double cxy = sxy - sx * sy / n, cxx = sxx - sx * sx / n, cyy = syy - sy * sy / n;
  return 1 - cxy * cxy / (cxx * cyy);
}

}  // namespace

TEST_CASE("residual variance over all pairs equals the direct all-pairs formula", "[quality]") {
  const Roll r = roll(400, 31);
  const auto all = unfurl::geodesic_rows(r.graph, {unfurl::EveryNode{}}).rows;
  unfurl::ResidualOptions o;  // 400 nodes: under the all-pairs limit
  const auto curve = unfurl::graph_residual_variance(r.graph, r.truth, o, {});
  CHECK(!curve.sampled);
  CHECK(curve.pairs == 400u * 399u);  // each pair once from each end
  CHECK(curve.drawn.find("every pair") != std::string::npos);
  for (std::size_t d = 1; d <= 2; ++d)
    CHECK(curve.by_dims[d - 1] == Approx(all_pairs(all, r.truth, d)).epsilon(1e-7));
}

TEST_CASE("random source rows estimate the all-pairs residual variance within their error",
          "[quality]") {
  const Roll r = roll(1500, 32);
  const auto all = unfurl::geodesic_rows(r.graph, {unfurl::EveryNode{}}).rows;
  unfurl::ResidualOptions o;
  o.all_pairs_limit = 1000;  // force the sampled path
  o.sources = 256;
  o.seed = 7;
  const auto curve = unfurl::graph_residual_variance(r.graph, r.truth, o, {});
  REQUIRE(curve.sampled);
  CHECK(curve.pairs == 256u * 1499u);
  REQUIRE(curve.standard_error.size() == 2);
  for (std::size_t d = 1; d <= 2; ++d) {
    const double want = all_pairs(all, r.truth, d);
    INFO("dims " << d << ": " << curve.by_dims[d - 1] << " vs " << want << " +- "
                 << curve.standard_error[d - 1]);
    CHECK(curve.standard_error[d - 1] > 0);
    CHECK(std::abs(curve.by_dims[d - 1] - want) < 4 * curve.standard_error[d - 1]);
  }
  // The seed alone decides the sources: same seed, same bytes, on 1 or 2 threads.
  const int threads = omp_get_max_threads();
  omp_set_num_threads(1);
  const auto one = unfurl::graph_residual_variance(r.graph, r.truth, o, {});
  omp_set_num_threads(threads);
  CHECK(one.by_dims == curve.by_dims);
  CHECK(one.standard_error == curve.standard_error);
}

TEST_CASE("sampled sources follow the caller's numbering, not the graph's", "[quality]") {
  unfurl::ResidualOptions o;
  o.all_pairs_limit = 10;
  o.sources = 5;
  std::string drawn;
  const auto plain = unfurl::residual_sources(50, o, {}, drawn);
  std::vector<unfurl::NodeId> reversed(50);
  for (std::size_t i = 0; i < 50; ++i) reversed[i] = static_cast<unfurl::NodeId>(49 - i);
  const auto mapped = unfurl::residual_sources(50, o, reversed, drawn);
  REQUIRE(plain.size() == 5);
  for (std::size_t i = 0; i < 5; ++i) CHECK(mapped[i] == 49 - plain[i]);
  CHECK(drawn.find("5 source nodes drawn uniformly at random") != std::string::npos);
}

TEST_CASE("the residual variance's source count shrinks with the graph within its pair budget",
          "[quality]") {
  // Each source row costs a Dijkstra run over the whole graph, so the rule caps sources x nodes
  // (common practice, no source: a fixed budget of work for a sampled statistic whose standard
  // error the curve reports).
  unfurl::ResidualOptions o;  // 256 sources, budget 64,000,000 pairs, at least 64
  CHECK(o.source_count(10'000) == 256);
  CHECK(o.source_count(250'000) == 256);
  CHECK(o.source_count(500'000) == 128);
  CHECK(o.source_count(1'000'000) == 64);
  CHECK(o.source_count(10'000'000) == 64);
  o.sources = 32;  // an explicit smaller count is never raised by the floor
  CHECK(o.source_count(10'000'000) == 32);
  o.min_sources = 0;
  CHECK_THROWS_AS(o.validate(), unfurl::OptionError);

  // The rows actually drawn follow the rule: 3,000 nodes with a budget of 150,000 pairs give
  // 50 sources, each paired with every other node.
  const Roll r = roll(3000, 33);
  unfurl::ResidualOptions small;
  small.all_pairs_limit = 1000;
  small.pair_budget = 150'000;
  small.min_sources = 8;
  const auto curve = unfurl::graph_residual_variance(r.graph, r.truth, small, {});
  REQUIRE(curve.sampled);
  CHECK(curve.pairs == 50u * 2999u);
  CHECK(curve.drawn.find("paired with 50 source nodes") != std::string::npos);
}

TEST_CASE("the residual variance from rows made apart equals the one-pass curve", "[quality]") {
  // The reference is graph_residual_variance, itself checked above against the direct
  // all-pairs formula (Tenenbaum et al. 2000, note 42) and its own standard error.
  const Roll r = roll(1500, 33);
  unfurl::ResidualOptions o;
  o.all_pairs_limit = 1000;
  o.sources = 40;  // three batches: 16, 16 and 8 rows
  o.seed = 9;
  const auto one_pass = unfurl::graph_residual_variance(r.graph, r.truth, o, {});
  const auto plan = unfurl::plan_residual(r.graph.nodes(), o, {});
  REQUIRE(plan.batches() == 3);
  CHECK(plan.batch(2).size() == 8);
  // Every batch made first (as a run keeps them), then handed over out of storage.
  std::vector<unfurl::DistanceRows> kept;
  for (std::size_t b = 0; b < plan.batches(); ++b)
    kept.push_back(unfurl::residual_rows(r.graph, plan, b));
  std::size_t asked = 0;
  const auto apart = unfurl::correlate_residual(plan, r.truth, [&](std::size_t b) {
    CHECK(b == asked++);
    return kept[b];
  });
  CHECK(asked == 3);
  CHECK(apart.by_dims == one_pass.by_dims);
  CHECK(apart.standard_error == one_pass.standard_error);
  CHECK(apart.pairs == one_pass.pairs);
  CHECK(apart.drawn == one_pass.drawn);
  CHECK(apart.sampled);
  // Rows of other sources are refused, not correlated.
  CHECK_THROWS_AS(
      unfurl::correlate_residual(plan, r.truth, [&](std::size_t b) { return kept[(b + 1) % 3]; }),
      unfurl::InternalError);
}

TEST_CASE("the residual variance keeps its digits for distances far from zero", "[quality]") {
  // Pearson's R is unchanged when a constant is added to every given distance (a textbook
  // property of the correlation coefficient), so rows lifted by 10,000 (about 1,000 times
  // their spread) must give the same curve: the one-pass row sums are shifted by a value of
  // the row, and the shift must come back out of the means exactly.
  const Roll r = roll(1500, 34);
  unfurl::ResidualOptions o;
  o.all_pairs_limit = 1000;
  o.sources = 20;
  const auto plan = unfurl::plan_residual(r.graph.nodes(), o, {});
  std::vector<unfurl::DistanceRows> kept;
  for (std::size_t b = 0; b < plan.batches(); ++b)
    kept.push_back(unfurl::residual_rows(r.graph, plan, b));
  const auto plain =
      unfurl::correlate_residual(plan, r.truth, [&](std::size_t b) { return kept[b]; });
  const auto lifted = unfurl::correlate_residual(plan, r.truth, [&](std::size_t b) {
    unfurl::DistanceRows rows = kept[b];
    for (float& v : rows.values) v += 10000.0f;
    return rows;
  });
  // float rows: 10,000 + x keeps x to about 1e-3 absolute, about 1e-4 of the spread.
  for (std::size_t d = 0; d < 2; ++d)
    CHECK(lifted.by_dims[d] == Approx(plain.by_dims[d]).epsilon(1e-3).margin(1e-6));
}

TEST_CASE("the residual variance of many map axes agrees with that of their first axes",
          "[quality]") {
  // by_dims[d - 1] uses the first d axes only (Tenenbaum et al. 2000, note 42), so a map of
  // 6 axes (the general path) and its first 2 and 4 axes (the fixed-width paths) must agree
  // on the axes they share.
  const Roll r = roll(600, 35);
  const auto rows = unfurl::geodesic_rows(r.graph, {unfurl::EveryNode{}}).rows;
  unfurl::PointSet wide(r.truth.rows, 6);
  for (std::size_t i = 0; i < wide.rows; ++i)
    for (std::size_t c = 0; c < 6; ++c)
      wide.row(i)[c] = c < 2 ? r.truth.row(i)[c] : 0.01f * static_cast<float>((i * (c + 3)) % 17);
  const auto all = unfurl::residual_variance(rows, wide);
  REQUIRE(all.by_dims.size() == 6);
  for (const std::size_t m : {std::size_t{2}, std::size_t{4}}) {
    unfurl::PointSet first(wide.rows, m);
    for (std::size_t i = 0; i < wide.rows; ++i)
      std::copy(wide.row(i), wide.row(i) + m, first.row(i));
    const auto part = unfurl::residual_variance(rows, first);
    for (std::size_t d = 0; d < m; ++d)
      CHECK(part.by_dims[d] == Approx(all.by_dims[d]).epsilon(1e-9));
  }
  CHECK(all.by_dims[0] == Approx(all_pairs(rows, r.truth, 1)).epsilon(1e-7));
  CHECK(all.by_dims[1] == Approx(all_pairs(rows, r.truth, 2)).epsilon(1e-7));
}
