#include "engine/components.hpp"

#include <algorithm>
#include <catch2/catch.hpp>
#include <cmath>
#include <limits>
#include <queue>

#include "engine/error.hpp"
#include "engine/graph_build.hpp"
#include "engine/neighbours.hpp"
#include "engine/random.hpp"

using namespace unfurl;

namespace {

// Blobs of the given sizes, centred 100 apart on a line, each a unit Gaussian cloud.
PointSet blobs(const std::vector<std::size_t>& sizes, std::uint64_t seed) {
  std::size_t n = 0;
  for (auto s : sizes) n += s;
  PointSet p(n, 3);
  Random rng(seed);
  std::size_t row = 0;
  for (std::size_t b = 0; b < sizes.size(); ++b)
    for (std::size_t i = 0; i < sizes[b]; ++i, ++row) {
      p.row(row)[0] = static_cast<float>(100.0 * static_cast<double>(b * b % 7) + rng.normal());
      p.row(row)[1] = static_cast<float>(30.0 * static_cast<double>(b) + rng.normal());
      p.row(row)[2] = static_cast<float>(rng.normal());
    }
  return p;
}

// Breadth-first search labels: the oracle for union-find (common practice, no source).
std::vector<int> bfs_labels(const NeighbourGraph& g) {
  std::vector<int> label(g.nodes(), -1);
  int next = 0;
  for (std::size_t s = 0; s < g.nodes(); ++s) {
    if (label[s] >= 0) continue;
    std::queue<std::size_t> q;
    q.push(s);
    label[s] = next;
    while (!q.empty()) {
      const auto v = q.front();
      q.pop();
      for (auto e = g.offsets[v]; e < g.offsets[v + 1]; ++e) {
        const auto w = g.targets[static_cast<std::size_t>(e)];
        if (label[w] < 0) label[w] = next, q.push(w);
      }
    }
    ++next;
  }
  return label;
}

double distance(const PointSet& p, std::size_t a, std::size_t b) {
  double s = 0;
  for (std::size_t j = 0; j < p.cols; ++j) s += std::pow(double(p.row(a)[j]) - p.row(b)[j], 2);
  return std::sqrt(s);
}

}  // namespace

TEST_CASE("union-find components equal breadth-first search", "[components]") {
  const auto pts = blobs({50, 7, 1, 120, 3}, 4);
  GraphOptions o;
  o.neighbourhood = NearestK{2};
  o.mutual = true;  // mutual graphs split readily, leaving isolated points too
  const auto g = build_neighbour_graph(pts, o).graph;
  const auto c = connected_components(g);
  const auto bfs = bfs_labels(g);
  REQUIRE(c.label.size() == bfs.size());
  CHECK(c.count == static_cast<std::size_t>(*std::max_element(bfs.begin(), bfs.end()) + 1));
  for (std::size_t v = 0; v < bfs.size(); ++v)
    CHECK(c.label[v] == static_cast<std::uint32_t>(bfs[v]));
  std::size_t total = 0;
  for (auto s : c.size) total += s;
  CHECK(total == g.nodes());
}

TEST_CASE("fail policy names the component sizes", "[components]") {
  const auto pts = blobs({40, 30, 20, 10, 5, 4, 3}, 1);
  GraphOptions o;
  o.neighbourhood = NearestK{2};
  const auto g = build_neighbour_graph(pts, o).graph;
  REQUIRE(connected_components(g).count == 7);
  ComponentOptions c;
  c.sizes_in_message = 3;
  CHECK_THROWS_WITH(
      make_connected(g, c),
      Catch::StartsWith("graph: not connected, 7 components of sizes 40, 30, 20 and 4 more"));
  CHECK_THROWS_AS(make_connected(g, c), DataError);
}

TEST_CASE("largest policy keeps the largest component and lists the dropped nodes",
          "[components]") {
  const auto pts = blobs({30, 80, 20}, 2);
  GraphOptions o;
  o.neighbourhood = NearestK{3};
  const auto g = build_neighbour_graph(pts, o).graph;
  ComponentOptions c;
  c.policy = ComponentPolicy::largest;
  const auto r = make_connected(g, c);
  REQUIRE(r.old_of_new.size() == 80);
  CHECK(r.old_of_new[0] == 30);
  CHECK(r.old_of_new[r.old_of_new.size() - 1] == 109);
  CHECK(r.dropped.size() == 50);
  CHECK(r.summary.dropped_nodes == 50);
  // With a repeated row the dropped rows outnumber the dropped nodes.
  auto with_copy = pts;
  with_copy.rows += 1;
  with_copy.values.insert(with_copy.values.end(), pts.row(3), pts.row(3) + 3);
  const auto built = build_neighbour_graph(with_copy, o);
  const auto rows = dropped_rows(built.node_of_point, make_connected(built.graph, c));
  CHECK(rows.size() == 51);
  CHECK(rows.back() == 130);
  CHECK(rows[3] == 3);
  CHECK(connected_components(r.graph).count == 1);
  // Every kept edge is an edge of the input between the same points with the same length.
  for (std::size_t v = 0; v < r.graph.nodes(); ++v)
    for (auto e = r.graph.offsets[v]; e < r.graph.offsets[v + 1]; ++e) {
      const auto w = r.graph.targets[static_cast<std::size_t>(e)];
      CHECK(r.graph.lengths[static_cast<std::size_t>(e)] ==
            Approx(distance(pts, r.old_of_new[v], r.old_of_new[w])).epsilon(1e-6));
    }
}

TEST_CASE("bridge policy adds the minimum spanning forest over components", "[components]") {
  // Sizes cover both search paths: sets of <= 32 nodes and larger ones.
  const auto pts = blobs({60, 5, 4, 45, 12, 6, 33}, 9);
  GraphOptions o;
  o.neighbourhood = NearestK{3};
  const auto g = build_neighbour_graph(pts, o).graph;
  const auto labels = connected_components(g);
  REQUIRE(labels.count == 7);
  ComponentOptions c;
  c.policy = ComponentPolicy::bridge;
  CHECK_THROWS_AS(make_connected(g, c), OptionError);  // no coordinates given
  const auto r = make_connected(g, c, pts);
  CHECK(connected_components(r.graph).count == 1);
  REQUIRE(r.bridges.size() == labels.count - 1);
  // Oracle, brute force: the closest pair distance between every two components, then
  // Prim's algorithm on that complete graph (Prim 1957; the multiset of MST edge lengths
  // is the same for every minimum spanning tree).
  const std::size_t m = labels.count;
  std::vector<std::vector<double>> between(m, std::vector<double>(m, INFINITY));
  for (std::size_t a = 0; a < pts.rows; ++a)
    for (std::size_t b = 0; b < pts.rows; ++b) {
      const auto la = labels.label[a], lb = labels.label[b];
      if (la != lb) between[la][lb] = std::min(between[la][lb], distance(pts, a, b));
    }
  std::vector<double> mst;
  std::vector<bool> in(m, false);
  std::vector<double> reach(m, INFINITY);
  reach[0] = 0;
  for (std::size_t step = 0; step < m; ++step) {
    std::size_t u = m;
    for (std::size_t v = 0; v < m; ++v)
      if (!in[v] && (u == m || reach[v] < reach[u])) u = v;
    in[u] = true;
    if (step > 0) mst.push_back(reach[u]);
    for (std::size_t v = 0; v < m; ++v) reach[v] = std::min(reach[v], between[u][v]);
  }
  std::sort(mst.begin(), mst.end());
  for (std::size_t i = 0; i < r.bridges.size(); ++i) {
    const auto& b = r.bridges[i];
    CHECK(labels.label[b.from] != labels.label[b.to]);
    CHECK(b.length == Approx(distance(pts, b.from, b.to)).epsilon(1e-6));
    CHECK(b.length == Approx(mst[i]).epsilon(1e-6));
  }
  CHECK(r.graph.directed_edges() == g.directed_edges() + 2 * r.bridges.size());
}

TEST_CASE("a connected graph passes through every policy unchanged", "[components]") {
  const auto pts = blobs({100}, 3);
  GraphOptions o;
  o.neighbourhood = NearestK{5};
  const auto g = build_neighbour_graph(pts, o).graph;
  for (auto p : {ComponentPolicy::fail, ComponentPolicy::largest, ComponentPolicy::bridge}) {
    ComponentOptions c;
    c.policy = p;
    const auto r = make_connected(g, c, pts);
    CHECK(r.summary.components == 1);
    CHECK(&r.connected_graph() == &g);  // the input itself, not a copy
    CHECK(r.graph.nodes() == 0);
    CHECK(r.old_of_new.size() == 100);
  }
}
