#include "engine/landmarks.hpp"
#include "engine/embedding.hpp"

#include <omp.h>

#include <atomic>
#include <catch2/catch.hpp>
#include <limits>
#include <set>

#include "engine/error.hpp"
#include "engine/random.hpp"
#include "tests/test_util.hpp"

using unfurl::NodeId;

namespace {

// Greedy farthest-point (maxmin) selection written directly from its definition on the full
// Floyd-Warshall matrix: first node from the seed as the picker draws it, then repeatedly
// the node with the largest distance to its nearest chosen landmark, lowest id on ties.
std::vector<NodeId> maxmin_by_definition(const unfurl::NeighbourGraph& g, std::size_t count,
                                         std::uint64_t seed) {
  const std::size_t n = g.nodes();
  const auto d = unfurl::test::floyd_warshall(g);
  unfurl::Random rng(seed);
  std::vector<NodeId> picks{static_cast<NodeId>(rng.below(n))};
  while (picks.size() < count) {
    double best = -1.0;
    NodeId at = 0;
    for (NodeId v = 0; v < n; ++v) {
      if (std::find(picks.begin(), picks.end(), v) != picks.end()) continue;
      double nearest = std::numeric_limits<double>::infinity();
      for (NodeId p : picks) nearest = std::min(nearest, d[p * n + v]);
      if (nearest > best) {
        best = nearest;
        at = v;
      }
    }
    picks.push_back(at);
  }
  return picks;
}

}  // namespace

TEST_CASE("maxmin picks follow the greedy farthest-point definition", "[landmarks]") {
  for (std::uint64_t seed : {1u, 5u, 8u}) {
    const auto g = unfurl::test::random_connected_graph(80, 150, seed);
    unfurl::LandmarkOptions o;
    o.count = unfurl::LandmarkCount{12};
    o.seed = seed;
    const auto r = unfurl::pick_landmarks(g, o);
    CHECK(r.rows.sources == maxmin_by_definition(g, 12, seed));
    REQUIRE(r.rows.rows == 12);
    const auto d = unfurl::test::floyd_warshall(g);
    for (std::size_t k = 0; k < 12; ++k)
      for (std::size_t j = 0; j < 80; ++j)
        REQUIRE(r.rows.row(k)[j] == Approx(d[r.rows.sources[k] * 80 + j]).epsilon(1e-6));
    CHECK(r.summary.coverage_radius > 0.0);
  }
}

TEST_CASE("maxmin on a path picks the far end, then the middle", "[landmarks]") {
  // Known answer on a unit path 0-1-...-10 starting at node 0: farthest is 10, then 5.
  std::vector<unfurl::test::Edge> edges;
  for (NodeId i = 0; i < 10; ++i) edges.push_back({i, i + 1, 1.f});
  const auto g = unfurl::test::graph_from_edges(11, edges);
  std::uint64_t seed = 1;
  while (unfurl::Random(seed).below(11) != 0) ++seed;  // a seed whose first draw is node 0
  unfurl::LandmarkOptions o;
  o.count = unfurl::LandmarkCount{3};
  o.seed = seed;
  const auto r = unfurl::pick_landmarks(g, o);
  CHECK(r.rows.sources == std::vector<NodeId>{0, 10, 5});
  CHECK(r.summary.coverage_radius == Approx(2.0));  // nodes 2, 3, 7, 8 are 2 from the nearest
}

TEST_CASE("random picks are distinct and follow the seed", "[landmarks]") {
  const auto g = unfurl::test::random_connected_graph(100, 200, 2);
  unfurl::LandmarkOptions o;
  o.count = unfurl::LandmarkCount{30};
  o.pick = unfurl::Pick::random;
  o.seed = 4;
  const auto a = unfurl::pick_landmarks(g, o);
  const std::set<NodeId> distinct(a.rows.sources.begin(), a.rows.sources.end());
  CHECK(distinct.size() == 30);
  CHECK(unfurl::pick_landmarks(g, o).rows.sources == a.rows.sources);
  o.seed = 5;
  CHECK(unfurl::pick_landmarks(g, o).rows.sources != a.rows.sources);
}

TEST_CASE("landmark rows do not depend on the thread count", "[landmarks]") {
  const auto g = unfurl::test::random_connected_graph(2000, 6000, 3);
  unfurl::LandmarkOptions o;
  o.count = unfurl::LandmarkCount{40};
  const int before = omp_get_max_threads();
  omp_set_num_threads(1);
  const auto one = unfurl::pick_landmarks(g, o);
  omp_set_num_threads(2);
  const auto two = unfurl::pick_landmarks(g, o);
  omp_set_num_threads(before);
  CHECK(one.rows.sources == two.rows.sources);
  CHECK(one.rows.values == two.rows.values);
}

TEST_CASE("landmark options are validated with the field named", "[landmarks]") {
  unfurl::LandmarkOptions o;
  o.count = unfurl::LandmarkCount{1};
  CHECK_THROWS_WITH(o.validate(100), Catch::Contains("LandmarkOptions.count: must be at least 2"));
  o.count = unfurl::LandmarkCount{101};
  CHECK_THROWS_WITH(o.validate(100), Catch::Contains("LandmarkOptions.count: must be at most"));
  o.count = unfurl::AutomaticLandmarks{};
  CHECK(o.resolved_count(100) == 100);
  CHECK(o.resolved_count(100000) == 128);       // the rule in engine/landmarks.hpp
  CHECK(o.resolved_count(100000, 200) == 201);  // dims + 1 for a map of 200 axes
  o.count = unfurl::AllLandmarks{};
  CHECK(o.resolved_count(100) == 100);
  // At least dims + 1 landmarks: checked where the map's dims are known, by the embedding.
  unfurl::EmbedOptions e;
  e.landmarks.count = unfurl::LandmarkCount{2};
  CHECK_THROWS_WITH(e.validate(100), Catch::Contains("LandmarkOptions.count: must be at least "
                                                     "SpectralOptions.dims + 1 = 3"));
  e.spectral.dims = 0;
  CHECK_THROWS_WITH(e.validate(100), Catch::Contains("SpectralOptions.dims"));
}

TEST_CASE("landmarks on a disconnected graph or after a stop request throw", "[landmarks]") {
  const auto split =
      unfurl::test::graph_from_edges(6, {{0, 1, 1.f}, {1, 2, 1.f}, {3, 4, 1.f}, {4, 5, 1.f}});
  unfurl::LandmarkOptions o;
  o.count = unfurl::LandmarkCount{3};
  CHECK_THROWS_WITH(unfurl::pick_landmarks(split, o), Catch::Contains("3 of 6 graph nodes"));
  o.pick = unfurl::Pick::random;
  CHECK_THROWS_AS(unfurl::pick_landmarks(split, o), unfurl::DataError);
  const auto g = unfurl::test::random_connected_graph(50, 50, 1);
  std::atomic<bool> flag{true};
  for (auto pick : {unfurl::Pick::maxmin, unfurl::Pick::random}) {
    o.pick = pick;
    CHECK_THROWS_AS(unfurl::pick_landmarks(g, o, unfurl::StopToken{&flag}),
                    unfurl::InterruptedError);
  }
}

TEST_CASE("maxmin warns when a landmark coincides with an earlier one", "[landmarks]") {
  // Nodes 0 and 1 are duplicate points (a zero-length edge): once 0, 1 and 2 are all
  // needed, one pick lies at distance 0 from an earlier one.
  const auto g = unfurl::test::graph_from_edges(3, {{0, 1, 0.f}, {1, 2, 1.f}});
  unfurl::LandmarkOptions o;
  o.count = unfurl::LandmarkCount{3};
  const auto r = unfurl::pick_landmarks(g, o);
  REQUIRE(r.summary.warnings.size() == 1);
  CHECK_THAT(r.summary.warnings[0], Catch::Contains("duplicate points"));
  o.count = unfurl::LandmarkCount{2};
  CHECK(unfurl::pick_landmarks(g, o).summary.warnings.empty());
}

TEST_CASE("the choice alone, then rows in batches, gives pick_landmarks's bytes", "[landmarks]") {
  // Reference: the definition of greedy maxmin on Floyd-Warshall distances (above) for the
  // choice, Floyd-Warshall for the rows (the shortest-path definition, Floyd 1962); and the
  // one-pass picker for the bytes, whatever the thread count.
  const auto g = unfurl::test::random_connected_graph(300, 700, 6);
  const auto d = unfurl::test::floyd_warshall(g);
  for (auto pick : {unfurl::Pick::maxmin, unfurl::Pick::random}) {
    unfurl::LandmarkOptions o;
    o.count = unfurl::LandmarkCount{21};
    o.pick = pick;
    o.seed = 9;
    const auto whole = unfurl::pick_landmarks(g, o);
    const int before = omp_get_max_threads();
    for (int threads : {1, 2}) {
      omp_set_num_threads(threads);
      auto chosen = unfurl::choose_landmarks(g, o);
      CHECK(chosen.rows.values.empty());
      CHECK(chosen.rows.sources == whole.rows.sources);
      CHECK(chosen.summary.coverage_radius == whole.summary.coverage_radius);
      if (pick == unfurl::Pick::maxmin)
        CHECK(chosen.rows.sources == maxmin_by_definition(g, 21, 9));
      chosen.rows.values.resize(chosen.rows.rows * chosen.rows.cols);
      for (std::size_t first = 0; first < 21; first += 4)  // batches of 4, the last of 1
        unfurl::fill_landmark_rows(g, chosen.rows, first, std::min<std::size_t>(4, 21 - first));
      CHECK(chosen.rows.values == whole.rows.values);
      for (std::size_t k = 0; k < 21; ++k)
        for (std::size_t j = 0; j < 300; ++j)
          REQUIRE(chosen.rows.row(k)[j] ==
                  Approx(d[chosen.rows.sources[k] * 300 + j]).epsilon(1e-6));
    }
    omp_set_num_threads(before);
  }
  unfurl::DistanceRows unsized;
  unsized.rows = 2;
  unsized.cols = 300;
  unsized.sources = {0, 1};
  CHECK_THROWS_AS(unfurl::fill_landmark_rows(g, unsized, 0, 2), unfurl::InternalError);
}
