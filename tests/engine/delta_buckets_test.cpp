#include "engine/detail/delta_buckets.hpp"

#include <algorithm>
#include <catch2/catch.hpp>
#include <cmath>
#include <cstring>
#include <functional>
#include <limits>
#include <queue>
#include <utility>

#include "engine/detail/dijkstra.hpp"
#include "engine/neighbours.hpp"
#include "engine/random.hpp"
#include "engine/synthetic.hpp"
#include "tests/test_util.hpp"

namespace {

using unfurl::NodeId;

// The reference: Dijkstra's algorithm as first published (Dijkstra, "A note on two problems in
// connexion with graphs", Numerische Mathematik 1, 1959) with a binary heap (std::priority_queue)
// and lazy deletion, summing in float32 like the engine. The rows must equal it to the bit.
std::vector<float> textbook_row(const unfurl::NeighbourGraph& g, NodeId source) {
  std::vector<float> dist(g.nodes(), std::numeric_limits<float>::infinity());
  using Item = std::pair<float, NodeId>;
  std::priority_queue<Item, std::vector<Item>, std::greater<>> heap;
  dist[source] = 0.0f;
  heap.push({0.0f, source});
  while (!heap.empty()) {
    const auto [d, u] = heap.top();
    heap.pop();
    if (d > dist[u]) continue;
    for (auto e = g.offsets[u]; e < g.offsets[u + 1]; ++e) {
      const float c = d + g.lengths[static_cast<std::size_t>(e)];
      const NodeId v = g.targets[static_cast<std::size_t>(e)];
      if (c < dist[v]) {
        dist[v] = c;
        heap.push({c, v});
      }
    }
  }
  return dist;
}

bool same_bits(const std::vector<float>& a, const std::vector<float>& b) {
  return a.size() == b.size() && std::memcmp(a.data(), b.data(), a.size() * sizeof(float)) == 0;
}

void require_rows_equal_textbook(const unfurl::NeighbourGraph& g, std::size_t sources) {
  unfurl::detail::DeltaBuckets buckets;
  REQUIRE(buckets.setup(g));
  std::vector<float> row(g.nodes());
  for (std::size_t s = 0; s < sources; ++s) {
    const auto source = static_cast<NodeId>(s * g.nodes() / sources);
    const std::size_t reached = buckets.run(g, source, row.data());
    const auto expected = textbook_row(g, source);
    REQUIRE(same_bits(row, expected));
    std::size_t finite = 0;
    for (float v : expected) finite += std::isfinite(v);
    REQUIRE(reached == finite);
    // Exact mode's shortcut (rank = node id): final for every node ranked after the source,
    // and it counts the later nodes it could not reach.
    std::vector<NodeId> rank(g.nodes());
    std::size_t later_unreached = 0;
    for (std::size_t v = 0; v < g.nodes(); ++v) {
      rank[v] = static_cast<NodeId>(v);
      later_unreached += v > source && !std::isfinite(expected[v]);
    }
    REQUIRE(buckets.run_to_later(g, source, rank, row.data()) == later_unreached);
    for (std::size_t v = source + 1; v < g.nodes(); ++v)
      REQUIRE(std::memcmp(&row[v], &expected[v], sizeof(float)) == 0);
  }
}

}  // namespace

TEST_CASE("delta-stepping rows equal textbook Dijkstra's to the bit on random graphs",
          "[geodesic]") {
  // Lengths of several kinds: spread over three orders of magnitude (many edges shorter than
  // a bucket, so nodes are rescanned), many ties (quarters), and zero-length edges
  // (duplicate points), which Dial's buckets cannot take.
  for (std::uint64_t seed : {1u, 2u, 3u}) {
    auto spread = unfurl::test::random_connected_graph(400, 1600, seed);
    for (float& w : spread.lengths) w = std::pow(10.0f, -3.0f * (w - 0.1f));
    auto ties = unfurl::test::random_connected_graph(400, 1200, seed + 10);
    for (float& w : ties.lengths) w = std::round(w * 4.0f) / 4.0f;
    auto zeros = unfurl::test::random_connected_graph(300, 900, seed + 20);
    for (std::size_t u = 0; u < zeros.nodes(); ++u)  // (u + v) % 10 keeps both directions equal
      for (auto e = zeros.offsets[u]; e < zeros.offsets[u + 1]; ++e)
        if ((u + zeros.targets[static_cast<std::size_t>(e)]) % 10 == 0)
          zeros.lengths[static_cast<std::size_t>(e)] = 0.0f;
    for (const auto* g : {&spread, &ties, &zeros}) require_rows_equal_textbook(*g, 25);
  }
}

TEST_CASE("delta-stepping rows equal textbook Dijkstra's at nodes of high degree", "[geodesic]") {
  // A node's edges are relaxed in rounds of at most 64 (engine/detail/delta_buckets.cpp,
  // kStaged): hubs of degree 63 to 499 cross one or more round boundaries, with lengths
  // spread over two orders of magnitude so that later rounds still lower distances.
  const std::size_t n = 500;
  auto base = unfurl::test::random_connected_graph(n, 1000, 7);
  std::vector<unfurl::test::Edge> edges;
  for (std::size_t u = 0; u < n; ++u)
    for (auto e = base.offsets[u]; e < base.offsets[u + 1]; ++e) {
      const NodeId v = base.targets[static_cast<std::size_t>(e)];
      if (u < v)
        edges.push_back({static_cast<NodeId>(u), v, base.lengths[static_cast<std::size_t>(e)]});
    }
  unfurl::Random rng(8);
  const std::size_t hub_degree[] = {63, 64, 65, 128, 129, 200, n - 1};
  for (std::size_t h = 0; h < std::size(hub_degree); ++h)
    for (std::size_t j = 0; j < hub_degree[h]; ++j) {
      const auto to = static_cast<NodeId>((h + 1 + j * 7) % n);
      if (to != h)
        edges.push_back(
            {static_cast<NodeId>(h), to, static_cast<float>(std::pow(10.0, -2.0 * rng.uniform()))});
    }
  const auto g = unfurl::test::graph_from_edges(n, edges);
  std::size_t widest = 0;
  for (std::size_t u = 0; u < n; ++u) widest = std::max(widest, g.degree(u));
  REQUIRE(widest > 128);
  require_rows_equal_textbook(g, 50);
}

TEST_CASE("delta-stepping rows equal textbook Dijkstra's on a Swiss roll kNN graph", "[geodesic]") {
  // The graph the landmark rows run on: k = 10 neighbours of 5,000 Swiss roll points
  // (engine/synthetic.hpp), whose shortest edge is far below the median.
  const auto roll = unfurl::swiss_roll(5000, 3).points;
  unfurl::GraphOptions o;
  const auto g = unfurl::build_neighbour_graph(roll, o).graph;
  require_rows_equal_textbook(g, 40);
}

TEST_CASE("delta-stepping counts the nodes a run reaches", "[geodesic]") {
  // Two components: a path 0-1-2 and an edge 3-4.
  const auto g = unfurl::test::graph_from_edges(5, {{0, 1, 1.0f}, {1, 2, 0.5f}, {3, 4, 2.0f}});
  unfurl::detail::DeltaBuckets buckets;
  REQUIRE(buckets.setup(g));
  std::vector<float> row(5);
  CHECK(buckets.run(g, 1, row.data()) == 3);
  CHECK(row[0] == 1.0f);
  CHECK(row[2] == 0.5f);
  CHECK(std::isinf(row[3]));
  CHECK(buckets.run(g, 4, row.data()) == 2);
  CHECK(row[3] == 2.0f);
  CHECK(std::isinf(row[0]));
  // Every edge of length 0: no bucket width; the workspace falls back to the heap.
  const auto flat = unfurl::test::graph_from_edges(3, {{0, 1, 0.0f}, {1, 2, 0.0f}});
  CHECK_FALSE(buckets.setup(flat));
  unfurl::detail::DijkstraWorkspace work(flat);
  CHECK(work.run(2, row.data()) == 0);
  CHECK(row[0] == 0.0f);
}
