#include "engine/sweep.hpp"

#include <algorithm>
#include <catch2/catch.hpp>
#include <cmath>
#include <set>
#include <tuple>

#include "engine/embedding.hpp"
#include "engine/error.hpp"
#include "engine/random.hpp"
#include "engine/synthetic.hpp"
#include "tests/test_util.hpp"

using namespace unfurl;

namespace {

using test::random_points;

using EdgeSet = std::set<std::pair<NodeId, NodeId>>;

EdgeSet edges_of(const NeighbourGraph& g) {
  EdgeSet out;
  for (std::size_t v = 0; v < g.nodes(); ++v)
    for (auto e = g.offsets[v]; e < g.offsets[v + 1]; ++e)
      out.insert({static_cast<NodeId>(v), g.targets[static_cast<std::size_t>(e)]});
  return out;
}

// Every squared distance in long double.
long double squared(const PointSet& p, std::size_t a, std::size_t b) {
  long double s = 0;
  for (std::size_t j = 0; j < p.cols; ++j) {
    const long double d = (long double)p.row(a)[j] - p.row(b)[j];
    s += d * d;
  }
  return s;
}

// The k-nearest graph by its definition (Tenenbaum, de Silva and Langford, Science 2000:
// i ~ j when j is among i's k nearest, or either way round), brute force over all pairs,
// ties to the smaller index; mutual: both ways round. Points must be distinct.
EdgeSet brute_knn_graph(const PointSet& p, std::size_t k, bool mutual) {
  std::vector<std::set<NodeId>> near(p.rows);
  for (std::size_t i = 0; i < p.rows; ++i) {
    std::vector<std::pair<long double, NodeId>> all;
    for (std::size_t j = 0; j < p.rows; ++j)
      if (j != i) all.push_back({squared(p, i, j), static_cast<NodeId>(j)});
    std::sort(all.begin(), all.end());
    for (std::size_t a = 0; a < k; ++a) near[i].insert(all[a].second);
  }
  EdgeSet out;
  for (std::size_t i = 0; i < p.rows; ++i)
    for (NodeId j : near[i])
      if (!mutual || near[j].count(static_cast<NodeId>(i))) {
        out.insert({static_cast<NodeId>(i), j});
        out.insert({j, static_cast<NodeId>(i)});
      }
  return out;
}

// The radius graph by its definition: every pair at distance <= r (inclusive, as SciPy's
// cKDTree.query_pairs).
EdgeSet brute_radius_graph(const PointSet& p, double r) {
  EdgeSet out;
  for (std::size_t i = 0; i < p.rows; ++i)
    for (std::size_t j = 0; j < p.rows; ++j)
      if (j != i && squared(p, i, j) <= (long double)r * r)
        out.insert({static_cast<NodeId>(i), static_cast<NodeId>(j)});
  return out;
}

void require_same_graph(const GraphResult& a, const GraphResult& b) {
  REQUIRE(a.graph.offsets == b.graph.offsets);
  REQUIRE(a.graph.targets == b.graph.targets);
  REQUIRE(a.graph.lengths == b.graph.lengths);  // the same exact lengths, bit for bit
  REQUIRE(a.node_of_point == b.node_of_point);
  REQUIRE(a.summary.undirected_edges == b.summary.undirected_edges);
}

}  // namespace

TEST_CASE("sweep: each k cut from the largest search equals a fresh search, edge for edge",
          "[sweep]") {
  const std::size_t largest = 12;
  for (const bool mutual : {false, true}) {
    const PointSet p = random_points(150, 3, 7, false);
    GraphOptions o;
    o.mutual = mutual;
    o.neighbourhood = NearestK{largest};
    const NeighbourSearch search = search_neighbours(p, o);
    for (std::size_t k = 1; k <= largest; ++k) {
      INFO("k " << k << (mutual ? " mutual" : " union"));
      GraphOptions fresh = o;
      fresh.neighbourhood = NearestK{k};
      const GraphResult cut = graph_from_search(search, NearestK{k});
      // A fresh search of the graph stage (itself checked against scikit-learn's
      // NearestNeighbors in tests/reference/graph_check.py).
      require_same_graph(cut, build_neighbour_graph(p, fresh));
      // The k-nearest graph's definition, brute force (Tenenbaum et al. 2000).
      CHECK(edges_of(cut.graph) == brute_knn_graph(p, k, mutual));
    }
  }
}

TEST_CASE("sweep: cut graphs equal fresh ones with ties, duplicates and both back ends",
          "[sweep]") {
  // A 4 x 4 x 4 integer grid drawn with repeats: many equal distances and exact duplicates.
  const PointSet p = random_points(120, 3, 11, true);
  for (const Search back_end : {Search::tree, Search::scan})
    for (const bool keep : {false, true}) {
      GraphOptions o;
      o.search = back_end;
      o.keep_duplicates = keep;
      o.neighbourhood = NearestK{9};
      const NeighbourSearch search = search_neighbours(p, o);
      for (std::size_t k = 1; k <= 9; ++k) {
        INFO("k " << k << " " << search_name(back_end) << (keep ? " keep" : " merge"));
        GraphOptions fresh = o;
        fresh.neighbourhood = NearestK{k};
        // The graph stage's fresh search (checked against scikit-learn in graph_check.py).
        require_same_graph(graph_from_search(search, NearestK{k}), build_neighbour_graph(p, fresh));
      }
    }
}

TEST_CASE("sweep: each radius cut from the largest search equals a fresh search", "[sweep]") {
  // Integer grid: pairs at exactly 1, sqrt 2, sqrt 3 and 2 test the inclusive boundary.
  const PointSet grid = random_points(60, 3, 5, true);
  const PointSet gauss = random_points(150, 2, 3, false);
  for (const PointSet* p : {&grid, &gauss}) {
    const std::vector<double> radii = {0.25, 0.5, 1.0, std::sqrt(2.0), 1.5, 2.0};
    GraphOptions o;
    o.neighbourhood = WithinRadius{radii.back()};
    const NeighbourSearch search = search_neighbours(*p, o);
    for (double r : radii) {
      INFO("radius " << r << " on " << (p == &grid ? "grid" : "gauss"));
      const GraphResult cut = graph_from_search(search, WithinRadius{r});
      if (p == &gauss) {
        // Distinct points: the definition of the radius graph, brute force (inclusive as
        // SciPy's cKDTree.query_pairs).
        CHECK(edges_of(cut.graph) == brute_radius_graph(*p, r));
      }
      GraphOptions fresh = o;
      fresh.neighbourhood = WithinRadius{r};
      bool fresh_has_edges = true;
      GraphResult again;
      try {
        again = build_neighbour_graph(*p, fresh);
      } catch (const DataError&) {
        fresh_has_edges = false;  // a fresh search refuses a radius that joins no pair
      }
      if (fresh_has_edges)
        require_same_graph(cut, again);
      else
        CHECK(cut.graph.directed_edges() == 0);
    }
  }
}

TEST_CASE("sweep: a cut must be of the searched rule and no larger", "[sweep]") {
  const PointSet p = random_points(40, 2, 1, false);
  GraphOptions o;
  o.neighbourhood = NearestK{5};
  const NeighbourSearch search = search_neighbours(p, o);
  CHECK_THROWS_AS(graph_from_search(search, NearestK{6}), OptionError);
  CHECK_THROWS_AS(graph_from_search(search, NearestK{0}), OptionError);
  CHECK_THROWS_AS(graph_from_search(search, WithinRadius{0.1}), OptionError);
}

TEST_CASE("sweep: rows on a Swiss roll; the largest setting's row is embed's map", "[sweep]") {
  const SyntheticSet roll = swiss_roll(500, 3);
  SweepOptions o;
  o.settings = {NearestK{6}, NearestK{8}, NearestK{10}};
  o.dims_high = 3;
  o.landmarks.count = LandmarkCount{40};
  const SweepResult r = sweep_neighbourhoods(roll.points, o);
  REQUIRE(r.rows.size() == 3);
  REQUIRE(r.linear.has_value());
  // Larger settings give supergraphs (the k-nearest graph's definition): edges never fall.
  CHECK(r.rows[0].edges <= r.rows[1].edges);
  CHECK(r.rows[1].edges <= r.rows[2].edges);
  for (const SweepRow& row : r.rows) {
    INFO(setting_name(row.setting) << " " << row.skipped);
    REQUIRE(row.embedded);
    CHECK(row.shared_landmarks);
    CHECK(row.landmarks == 40);
    CHECK(row.residual.size() == 3);
    CHECK(row.score.k == 12);
    CHECK(row.score.t_low <= row.score.trustworthiness);
    CHECK(row.score.trustworthiness <= row.score.t_high);
  }
  // The largest setting picks the landmarks itself, as embed does at that k with the same
  // seed: the same map, byte for byte (the embedding's steps are shared, not copied).
  EmbedOptions e;
  e.graph.neighbourhood = NearestK{10};
  e.landmarks.count = LandmarkCount{40};
  e.spectral.dims = 3;
  const EmbedResult embedded = embed_points(roll.points, e);
  REQUIRE(r.rows[2].map.rows == embedded.coords.rows);
  for (std::size_t i = 0; i < embedded.coords.rows; ++i) {
    CHECK(r.rows[2].map.row(i)[0] == embedded.coords.row(i)[0]);
    CHECK(r.rows[2].map.row(i)[1] == embedded.coords.row(i)[1]);
  }
  // Unrolling beats the linear baseline on a Swiss roll (Tenenbaum et al. 2000, Fig. 3: PCA
  // cannot unroll it): the recommended setting's T above PCA's.
  REQUIRE(r.usable);
  REQUIRE(r.recommended.has_value());
  CHECK(r.rows[*r.recommended].score.trustworthiness > r.linear->score.trustworthiness);
  CHECK_FALSE(r.recommendation.empty());
}

TEST_CASE("sweep: settings that leave every graph disconnected give no usable setting", "[sweep]") {
  // Two clusters 1000 apart: no k below the cluster size joins them (analytic).
  Random rng(2);
  PointSet p(200, 2);
  for (std::size_t i = 0; i < p.rows; ++i) {
    p.row(i)[0] = static_cast<float>(rng.normal() + (i < 100 ? 0.0 : 1000.0));
    p.row(i)[1] = static_cast<float>(rng.normal());
  }
  SweepOptions o;
  o.settings = {NearestK{4}, NearestK{8}};
  o.dims_high = 2;
  o.landmarks.count = LandmarkCount{20};
  const SweepResult r = sweep_neighbourhoods(p, o);
  CHECK_FALSE(r.usable);
  CHECK_FALSE(r.recommended.has_value());
  for (const SweepRow& row : r.rows) {
    CHECK_FALSE(row.embedded);
    CHECK(row.components >= 2);
    CHECK(row.skipped.rfind("disconnected", 0) == 0);
  }
  CHECK(r.recommendation.rfind("no usable setting", 0) == 0);
  // With the largest component kept, each setting maps 100 of the 200 points.
  o.components.policy = ComponentPolicy::largest;
  const SweepResult kept = sweep_neighbourhoods(p, o);
  CHECK(kept.usable);
  for (const SweepRow& row : kept.rows) CHECK(row.map_points == 100);
}

TEST_CASE("sweep: bad options name their field", "[sweep]") {
  const SyntheticSet roll = swiss_roll(100, 1);
  auto refuses = [&](SweepOptions o, const std::string& field) {
    try {
      o.validate(roll.points.rows);
      FAIL("accepted; expected a refusal naming " << field);
    } catch (const OptionError& e) {
      CHECK(std::string(e.what()).rfind(field, 0) == 0);
    }
  };
  SweepOptions o;
  o.settings = {};
  refuses(o, "NearestK.k");
  o.settings = {NearestK{10}, NearestK{5}};
  refuses(o, "NearestK.k");
  o.settings = {NearestK{5}, NearestK{5}};
  refuses(o, "NearestK.k");
  o.settings = {WithinRadius{2.0}, WithinRadius{1.0}};
  refuses(o, "WithinRadius.radius");
  o.settings = {NearestK{5}, WithinRadius{1.0}};
  refuses(o, "NearestK.k");
  o.settings = {NearestK{5}, NearestK{100}};
  refuses(o, "NearestK.k");
  o = SweepOptions{};
  o.dims_low = 3;
  o.dims_high = 2;
  refuses(o, "SweepOptions.dims_high");
  o = SweepOptions{};
  o.score_dims = 7;
  refuses(o, "SweepOptions.score_dims");
  o = SweepOptions{};
  o.scores.ks = {5, 12};
  refuses(o, "QualityOptions.ks");
}
