#include "engine/embedding_steps.hpp"

#include <algorithm>
#include <catch2/catch.hpp>
#include <cmath>
#include <cstdlib>
#include <set>
#include <vector>

#include "engine/graph_build.hpp"

using namespace unfurl;

namespace {

// Points at x = 0, 1, ..., n - 1 on a line in the plane (y = offset).
PointSet line(std::size_t n, float offset = 0.0f) {
  PointSet p(n, 2);
  for (std::size_t i = 0; i < n; ++i) {
    p.row(i)[0] = static_cast<float>(i);
    p.row(i)[1] = offset;
  }
  return p;
}

PointSet stacked(const PointSet& a, const PointSet& b) {
  PointSet p(a.rows + b.rows, a.cols);
  std::copy(a.values.begin(), a.values.end(), p.values.begin());
  std::copy(b.values.begin(), b.values.end(),
            p.values.begin() + static_cast<long>(a.values.size()));
  return p;
}

double distance(const float* a, const float* b, std::size_t d) {
  double s = 0;
  for (std::size_t j = 0; j < d; ++j) s += (double(a[j]) - b[j]) * (double(a[j]) - b[j]);
  return std::sqrt(s);
}

// A cycle of n nodes with unit edges: geodesic distance min(|i - j|, n - |i - j|)
// (analytic ground truth).
NeighbourGraph cycle(std::size_t n) {
  std::vector<NodeId> from, to;
  std::vector<float> length;
  for (std::size_t i = 0; i < n; ++i) {
    from.push_back(static_cast<NodeId>(i));
    to.push_back(static_cast<NodeId>((i + 1) % n));
    length.push_back(1.0f);
  }
  return graph_from_edges(n, from, to, length);
}

float cycle_distance(std::size_t n, std::size_t i, std::size_t j) {
  const std::size_t d = i > j ? i - j : j - i;
  return static_cast<float>(std::min(d, n - d));
}

// A path of n nodes with unit edges: geodesic distance |i - j| (analytic ground truth).
NeighbourGraph path(std::size_t n) {
  std::vector<NodeId> from, to;
  std::vector<float> length;
  for (std::size_t i = 0; i + 1 < n; ++i) {
    from.push_back(static_cast<NodeId>(i));
    to.push_back(static_cast<NodeId>(i + 1));
    length.push_back(1.0f);
  }
  return graph_from_edges(n, from, to, length);
}

PointSet column(std::vector<float> values) {
  PointSet p(values.size(), 1);
  p.values = std::move(values);
  return p;
}

DistanceRows distance_rows(std::size_t cols, std::vector<NodeId> sources, RowValues values) {
  DistanceRows d;
  d.rows = sources.size();
  d.cols = cols;
  d.sources = std::move(sources);
  d.values = std::move(values);
  return d;
}

}  // namespace

TEST_CASE("node_graph: duplicates share a node whose point is the first copy", "[steps]") {
  PointSet p = stacked(line(6), line(1));
  std::copy_n(p.row(2), 2, p.row(6));  // row 6: an exact copy of row 2
  GraphOptions go;
  go.neighbourhood = NearestK{2};
  const NodeGraph g = node_graph(p, go);
  REQUIRE(g.graph.nodes() == 6);  // exact duplicates merged (analytic: 6 distinct points)
  CHECK(g.node_of_point.size() == 7);
  CHECK(g.node_of_point[6] == g.node_of_point[2]);
  CHECK(g.point_of_node[g.node_of_point[6]] == 2);
  for (std::size_t r = 0; r < p.rows; ++r)  // every row's node holds that row's point
    CHECK(distance(g.node_points.row(g.node_of_point[r]), p.row(r), 2) == 0.0);
  // Edge lengths are the Euclidean distances of the nodes' points (analytic ground truth).
  for (std::size_t v = 0; v < g.graph.nodes(); ++v)
    for (auto e = g.graph.offsets[v]; e < g.graph.offsets[v + 1]; ++e) {
      const NodeId w = g.graph.targets[static_cast<std::size_t>(e)];
      CHECK(g.graph.lengths[static_cast<std::size_t>(e)] ==
            Approx(distance(g.node_points.row(v), g.node_points.row(w), 2)));
    }
}

TEST_CASE("order_nodes: the ordered graph keeps every edge of the kept component", "[steps]") {
  // Two lines 1000 apart: a 2-nearest graph has two components (analytic ground truth);
  // the largest keeps the 10-point line.
  const PointSet p = stacked(line(10), line(4, 1000.0f));
  GraphOptions go;
  go.neighbourhood = NearestK{2};
  const NodeGraph g = node_graph(p, go);
  ComponentOptions co;
  co.policy = ComponentPolicy::largest;
  const ComponentResult c = make_connected(g.graph, co, g.node_points);
  REQUIRE(c.connected_graph().nodes() == 10);
  for (NodeOrder order : {NodeOrder::morton, NodeOrder::tree_leaves, NodeOrder::bfs}) {
    const OrderedGraph o = order_nodes(c, g.node_points, {order});
    CHECK(o.order == order);
    REQUIRE(o.graph.nodes() == 10);
    CHECK(o.graph.directed_edges() == c.connected_graph().directed_edges());
    const Numbering node_of_ordered = o.numbering.old_of_new.then(c.old_of_new);
    for (std::size_t u = 0; u < o.graph.nodes(); ++u)
      for (auto e = o.graph.offsets[u]; e < o.graph.offsets[u + 1]; ++e) {
        const NodeId w = o.graph.targets[static_cast<std::size_t>(e)];
        CHECK(o.graph.lengths[static_cast<std::size_t>(e)] ==
              Approx(distance(g.node_points.row(node_of_ordered[u]),
                              g.node_points.row(node_of_ordered[w]), 2)));
      }
  }
  // Without points the point-based orders fall back to bfs (documented in the header).
  CHECK(order_nodes(c, PointSet{}, {NodeOrder::morton}).order == NodeOrder::bfs);
}

TEST_CASE("source_rows: all rows of a cycle in exact mode", "[steps]") {
  const std::size_t n = 12;
  const NeighbourGraph g = cycle(n);
  const Numbering id = Numbering::identity(n);
  SourceRowsOptions so;
  so.landmarks.count = AllLandmarks{};
  const SourceRows s = source_rows(g, id.values(), so);
  REQUIRE(s.all_nodes);
  REQUIRE(s.rows.rows == n);
  CHECK(s.summary.landmarks == n);
  for (std::size_t r = 0; r < n; ++r) {
    CHECK(s.rows.sources[r] == r);
    for (std::size_t t = 0; t < n; ++t) CHECK(s.rows.row(r)[t] == cycle_distance(n, r, t));
  }
}

TEST_CASE("source_rows: landmark rows of a cycle, the same nodes in any node order", "[steps]") {
  const std::size_t n = 16;
  const NeighbourGraph g = cycle(n);
  SourceRowsOptions so;
  so.landmarks.count = LandmarkCount{4};
  so.landmarks.pick = Pick::random;
  so.landmarks.seed = 7;
  const SourceRows s = source_rows(g, Numbering::identity(n).values(), so);
  REQUIRE_FALSE(s.all_nodes);
  REQUIRE(s.rows.rows == 4);
  for (std::size_t r = 0; r < 4; ++r)
    for (std::size_t t = 0; t < n; ++t)
      CHECK(s.rows.row(r)[t] == cycle_distance(n, s.rows.sources[r], t));
  // Renumbered (node v becomes (5 v + 3) mod 16, a permutation as 5 and 16 are coprime) with
  // the renumbering as draw order: the seed picks the same nodes (the contract of
  // LandmarkOptions::draw_order, common practice, no source).
  std::vector<NodeId> old_of_new(n);
  for (std::size_t v = 0; v < n; ++v) old_of_new[(5 * v + 3) % n] = static_cast<NodeId>(v);
  Renumbering r{Numbering(old_of_new, n).inverse(), Numbering(old_of_new, n)};
  const SourceRows t = source_rows(renumber(g, r), r.new_of_old.values(), so);
  REQUIRE(t.rows.rows == 4);
  for (std::size_t l = 0; l < 4; ++l) CHECK(r.old_of_new[t.rows.sources[l]] == s.rows.sources[l]);
}

TEST_CASE("map_nodes: a path unfolds onto a line in exact and landmark mode", "[steps]") {
  // Classical MDS of distances |i - j| recovers the points i up to translation and sign
  // (Torgerson 1952; analytic ground truth); landmark MDS is exact when the landmarks
  // affinely span the data (de Silva and Tenenbaum 2004).
  const std::size_t n = 9;
  const NeighbourGraph g = path(n);
  SpectralOptions sp;
  sp.dims = 1;
  for (bool exact : {true, false}) {
    SourceRowsOptions so;
    so.landmarks.count = exact ? LandmarkChoice{AllLandmarks{}} : LandmarkChoice{LandmarkCount{3}};
    const SourceRows s = source_rows(g, Numbering::identity(n).values(), so);
    const SpectralResult map = map_nodes(s, sp);
    REQUIRE(map.coords.rows == n);
    REQUIRE(map.coords.cols == 1);
    for (std::size_t i = 0; i < n; ++i)
      for (std::size_t j = 0; j < n; ++j)
        CHECK(std::abs(map.coords.row(i)[0] - map.coords.row(j)[0]) ==
              Approx(std::abs(double(i) - double(j))).margin(1e-4));
  }
}

TEST_CASE("map_to_input: duplicates, drops and landmarks back as input rows", "[steps]") {
  // Worked by hand from the contract in embedding_steps.hpp (common practice, no source):
  // rows 1 and 3 share node 1, row 2 was dropped, nodes 0..2 are rows 0, 1, 4.
  const Numbering node_of_point({0, 1, Numbering::absent, 1, 2}, 3);
  const Numbering point_of_node({0, 1, 4}, 5);
  const PointSet coords = column({10, 20, 30});
  const DistanceRows geo = distance_rows(3, {2, 1}, {2, 1, 0, 1, 0, 1});
  const std::vector<NodeId> landmarks{2, 1};
  const InputMap m = map_to_input(coords, geo, landmarks, node_of_point, point_of_node);
  CHECK(m.rows == std::vector<std::size_t>{0, 1, 3, 4});
  CHECK(m.dropped == std::vector<std::size_t>{2});
  CHECK(m.coords.values == std::vector<float>{10, 20, 20, 30});
  CHECK(m.landmark_rows == std::vector<std::size_t>{4, 1});
  REQUIRE(m.geodesic.cols == 4);
  CHECK(m.geodesic.values == RowValues{2, 1, 1, 0, 1, 0, 0, 1});
  CHECK(m.geodesic.sources == std::vector<NodeId>{3, 1});  // node 1's first map row is 1
}

TEST_CASE("map_to_input: without duplicates the rows are permuted in place", "[steps]") {
  // Ordered node v is input row 2 - v: the map reverses the node order.
  const Numbering node_of_point({2, 1, 0}, 3);
  const Numbering point_of_node({2, 1, 0}, 3);
  const PointSet coords = column({7, 8, 9});
  DistanceRows geo = distance_rows(3, {0}, {0, 1, 2});
  const float* before = geo.values.data();
  const std::vector<NodeId> landmarks{0};
  const InputMap m = map_to_input(coords, std::move(geo), landmarks, node_of_point, point_of_node);
  CHECK(m.coords.values == std::vector<float>{9, 8, 7});
  CHECK(m.geodesic.values == RowValues{2, 1, 0});
  CHECK(m.geodesic.sources == std::vector<NodeId>{2});
  CHECK(m.landmark_rows == std::vector<std::size_t>{2});
  CHECK(m.geodesic.values.data() == before);  // the L x N rows exist once
}
