#include "engine/reorder.hpp"

#include <algorithm>
#include <catch2/catch.hpp>
#include <set>
#include <span>
#include <tuple>

#include "engine/neighbours.hpp"
#include "engine/random.hpp"
#include "engine/synthetic.hpp"

using namespace unfurl;

namespace {

// Mean |new(i) - new(j)| over the edges: the locality a renumbering is for.
double mean_gap(const NeighbourGraph& g) {
  double sum = 0;
  for (std::size_t v = 0; v < g.nodes(); ++v)
    for (auto e = g.offsets[v]; e < g.offsets[v + 1]; ++e)
      sum += std::abs(double(g.targets[static_cast<std::size_t>(e)]) - double(v));
  return sum / static_cast<double>(g.directed_edges());
}

std::set<std::tuple<NodeId, NodeId, float>> mapped_edges(const NeighbourGraph& g,
                                                         std::span<const NodeId> to) {
  std::set<std::tuple<NodeId, NodeId, float>> s;
  for (std::size_t v = 0; v < g.nodes(); ++v)
    for (auto e = g.offsets[v]; e < g.offsets[v + 1]; ++e)
      s.insert({to[v], to[g.targets[static_cast<std::size_t>(e)]],
                g.lengths[static_cast<std::size_t>(e)]});
  return s;
}

}  // namespace

TEST_CASE("every node order is a permutation that preserves the graph", "[reorder]") {
  const auto roll = swiss_roll(3000, 5);
  GraphOptions o;
  o.neighbourhood = NearestK{6};
  const auto g = build_neighbour_graph(roll.points, o).graph;
  std::vector<NodeId> identity(g.nodes());
  for (std::size_t i = 0; i < identity.size(); ++i) identity[i] = static_cast<NodeId>(i);
  const double before = mean_gap(g);
  for (auto order : {NodeOrder::input, NodeOrder::bfs, NodeOrder::morton, NodeOrder::tree_leaves}) {
    INFO(node_order_name(order));
    const auto r = node_order(order, g, roll.points);
    REQUIRE(r.new_of_old.size() == g.nodes());
    for (std::size_t v = 0; v < g.nodes(); ++v) REQUIRE(r.old_of_new[r.new_of_old[v]] == v);
    const auto h = renumber(g, r);
    for (std::size_t v = 0; v < h.nodes(); ++v)
      for (auto e = h.offsets[v] + 1; e < h.offsets[v + 1]; ++e)
        REQUIRE(h.targets[static_cast<std::size_t>(e - 1)] <
                h.targets[static_cast<std::size_t>(e)]);
    CHECK(mapped_edges(g, r.new_of_old.values()) == mapped_edges(h, identity));
    // The generator draws points independently, so input order has no locality; every
    // spatial or graph order must shrink the id gaps along edges by a wide margin.
    if (order != NodeOrder::input) CHECK(mean_gap(h) < 0.1 * before);
  }
}

TEST_CASE("breadth-first order keeps components contiguous", "[reorder]") {
  // Two paths 0-2-4 and 1-3 interleaved in id.
  NeighbourGraph g;
  g.offsets = {0, 1, 2, 4, 5, 6};
  g.targets = {2, 3, 0, 4, 1, 2};
  g.lengths = {1, 1, 1, 1, 1, 1};
  const auto r = node_order(NodeOrder::bfs, g);
  const auto first = std::minmax({r.new_of_old[0], r.new_of_old[2], r.new_of_old[4]});
  CHECK(first.second - first.first == 2);
  const auto second = std::minmax(r.new_of_old[1], r.new_of_old[3]);
  CHECK(second.second - second.first == 1);
  // Along a path, consecutive nodes get consecutive ids.
  CHECK(std::abs(int(r.new_of_old[0]) - int(r.new_of_old[2])) == 1);
  CHECK(std::abs(int(r.new_of_old[2]) - int(r.new_of_old[4])) == 1);
}
