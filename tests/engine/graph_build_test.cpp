#include "engine/graph_build.hpp"

#include <omp.h>

#include <algorithm>
#include <catch2/catch.hpp>
#include <cmath>
#include <map>
#include <vector>

#include "engine/detail/csr.hpp"
#include "engine/error.hpp"
#include "engine/random.hpp"

using namespace unfurl;

TEST_CASE("edge lists are symmetrised, merged and sorted", "[graph_build]") {
  const std::vector<NodeId> from{2, 0, 1, 3, 1};
  const std::vector<NodeId> to{0, 1, 0, 3, 2};
  const std::vector<float> len{4.0f, 1.5f, 1.5f, 0.0f, 2.0f};  // 1-0 repeats 0-1; 3-3 a loop
  const auto g = graph_from_edges(4, from, to, len);
  REQUIRE(g.nodes() == 4);
  CHECK(g.offsets == std::vector<std::int64_t>{0, 2, 4, 6, 6});
  CHECK(g.targets == std::vector<NodeId>{1, 2, 0, 2, 0, 1});
  CHECK(g.lengths == std::vector<float>{1.5f, 4.0f, 1.5f, 2.0f, 4.0f, 2.0f});
}

TEST_CASE("edge list errors name the edge", "[graph_build]") {
  const std::vector<NodeId> a{0, 1}, b{1, 5};
  const std::vector<float> ok{1.0f, 1.0f};
  CHECK_THROWS_WITH(graph_from_edges(3, a, b, ok),
                    Catch::StartsWith("edge 1: node 5 is out of range"));
  const std::vector<NodeId> c{0, 1};
  const std::vector<float> neg{1.0f, -2.0f}, nan{std::nanf(""), 1.0f};
  CHECK_THROWS_WITH(graph_from_edges(3, a, c, neg), Catch::StartsWith("edge 1: length"));
  CHECK_THROWS_WITH(graph_from_edges(3, a, c, nan), Catch::StartsWith("edge 0: length"));
  const std::vector<NodeId> f{0, 2, 1}, t{1, 2, 0};
  const std::vector<float> clash{1.0f, 0.0f, 1.25f};
  CHECK_THROWS_WITH(
      graph_from_edges(3, f, t, clash),
      Catch::StartsWith("edge 0 and edge 2 join nodes 0 and 1 with different lengths"));
  CHECK_THROWS_AS(graph_from_edges(3, f, t, ok), DataError);  // unequal array sizes
}

TEST_CASE("partial distance matrices give one edge per given pair", "[graph_build]") {
  const float m = std::nanf("");
  // 3 nodes: 0-1 given both ways, 1-2 given one way only, 0-2 missing.
  const std::vector<float> d{0, 2, m,  //
                             2, m, 3,  //
                             m, m, 0};
  const auto g = graph_from_partial_distances(3, d);
  CHECK(g.targets == std::vector<NodeId>{1, 0, 2, 1});
  CHECK(g.lengths == std::vector<float>{2, 2, 3, 3});
  auto asym = d;
  asym[3] = 2.5f;
  CHECK_THROWS_WITH(
      graph_from_partial_distances(3, asym),
      Catch::StartsWith("distances: row 0, column 1 is 2.000000 but row 1, column 0"));
  auto diag = d;
  diag[8] = 1.0f;
  CHECK_THROWS_WITH(graph_from_partial_distances(3, diag),
                    Catch::StartsWith("distances: row 2, column 2"));
  auto neg = d;
  neg[5] = -1.0f;
  CHECK_THROWS_AS(graph_from_partial_distances(3, neg), DataError);
  CHECK_THROWS_AS(graph_from_partial_distances(2, d), DataError);
}

TEST_CASE("CSR assembly equals a pair-by-pair oracle on any thread count", "[graph_build]") {
  // The definition in engine/detail/csr.hpp, checked against an ordered map of unordered
  // pairs filled edge by edge (first length kept, loops dropped): common practice, no source.
  // Repeats carry a different length each time here, so "first length wins" is visible.
  constexpr std::size_t nodes = 5000;
  Random random(20261202);
  std::vector<detail::Edge> edges;
  for (std::size_t i = 0; i < 60000; ++i) {
    const auto a = static_cast<NodeId>(random.below(nodes));
    const auto b = static_cast<NodeId>(i % 7 == 0 ? a : random.below(nodes));
    edges.push_back({a, b, static_cast<float>(i)});
    if (i % 5 == 0) edges.push_back({b, a, static_cast<float>(i) + 0.5f});  // repeat, reversed
  }
  std::map<std::pair<NodeId, NodeId>, float> first;
  for (const detail::Edge& e : edges)
    if (e.from != e.to)
      first.try_emplace({std::min(e.from, e.to), std::max(e.from, e.to)}, e.length);
  std::vector<std::vector<std::pair<NodeId, float>>> rows(nodes);
  for (const auto& [pair, length] : first) {
    rows[pair.first].push_back({pair.second, length});
    rows[pair.second].push_back({pair.first, length});
  }
  NeighbourGraph expected;
  expected.offsets.push_back(0);
  for (auto& row : rows) {
    std::sort(row.begin(), row.end());
    for (const auto& [target, length] : row) {
      expected.targets.push_back(target);
      expected.lengths.push_back(length);
    }
    expected.offsets.push_back(static_cast<std::int64_t>(expected.targets.size()));
  }
  const int threads = omp_get_max_threads();
  for (const int t : {1, 2, 3}) {
    omp_set_num_threads(t);
    const NeighbourGraph g = detail::symmetric_csr(nodes, edges);
    CHECK(g.offsets == expected.offsets);
    CHECK(g.targets == expected.targets);
    CHECK(g.lengths == expected.lengths);
  }
  omp_set_num_threads(threads);
}
