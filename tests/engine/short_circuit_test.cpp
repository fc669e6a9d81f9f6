#include "engine/short_circuit.hpp"

#include <omp.h>

#include <algorithm>
#include <catch2/catch.hpp>
#include <cmath>
#include <utility>
#include <vector>

#include "engine/graph_build.hpp"
#include "engine/neighbours.hpp"
#include "engine/random.hpp"

namespace {

using unfurl::NodeId;

// A Swiss roll with a narrow gap between its layers, from its analytic parametrisation: the
// Archimedean spiral r(theta) = r0 + gap theta / (2 pi) swept along the height axis, so that
// consecutive layers (theta and theta + 2 pi) lie exactly `gap` apart radially. Points sit on
// a grid of spacing `step` in (arc length, height), each moved by up to a quarter step, so
// the sheet is sampled evenly and the graph's short edges are about `step` long.
struct GapRoll {
  unfurl::PointSet points;
  std::vector<double> theta;  // per point: its angle along the spiral
  std::vector<double> height;
  double r0 = 3.0, gap = 1.0, step = 0.2;

  double radius(double t) const { return r0 + gap * t / (2 * M_PI); }
  // Arc length of the spiral between angles t0 < t1 (Simpson's rule on
  // |d/dt (r cos t, r sin t)| = sqrt(r^2 + (gap / 2 pi)^2)).
  double arc_length(double t0, double t1) const {
    const int m = 2000;
    const double h = (t1 - t0) / m, b = gap / (2 * M_PI);
    double sum = 0;
    for (int i = 0; i <= m; ++i) {
      const double r = radius(t0 + i * h);
      sum += (i == 0 || i == m ? 1 : i % 2 ? 4 : 2) * std::sqrt(r * r + b * b);
    }
    return sum * h / 3;
  }
};

GapRoll gap_roll(double turns, double height, std::uint64_t seed) {
  GapRoll roll;
  unfurl::Random random(seed);
  const double b = roll.gap / (2 * M_PI);
  std::vector<float> values;
  for (double t = 0; t <= 2 * M_PI * turns;) {
    for (double y = 0; y <= height + 1e-9; y += roll.step) {
      const double tj =
          t + (random.uniform() - 0.5) * 0.5 * roll.step / std::hypot(roll.radius(t), b);
      const double yj = y + (random.uniform() - 0.5) * 0.5 * roll.step;
      const double r = roll.radius(tj);
      values.insert(values.end(), {static_cast<float>(r * std::cos(tj)), static_cast<float>(yj),
                                   static_cast<float>(r * std::sin(tj))});
      roll.theta.push_back(tj);
      roll.height.push_back(yj);
    }
    t += roll.step / std::hypot(roll.radius(t), b);  // one step of arc length
  }
  roll.points = unfurl::PointSet(values.size() / 3, 3);
  roll.points.values = std::move(values);
  return roll;
}

// Analytic geometry of the roll: an edge crosses the gap when its ends lie on different
// layers, half a turn or more apart in angle (edges along the sheet span a small angle).
bool crosses_gap(const GapRoll& roll, NodeId a, NodeId b) {
  return std::abs(roll.theta[a] - roll.theta[b]) > M_PI;
}

unfurl::NeighbourGraph knn_graph(const GapRoll& roll, std::size_t k) {
  unfurl::GraphOptions o;
  o.neighbourhood = unfurl::NearestK{k};
  auto g = unfurl::build_neighbour_graph(roll.points, o);
  REQUIRE(g.graph.nodes() == roll.points.rows);  // no duplicates: nodes are the points
  return std::move(g.graph);
}

std::size_t gap_edges(const GapRoll& roll, const unfurl::NeighbourGraph& g) {
  std::size_t count = 0;
  for (std::size_t a = 0; a < g.nodes(); ++a)
    for (auto e = g.offsets[a]; e < g.offsets[a + 1]; ++e)
      if (g.targets[e] > a && crosses_gap(roll, static_cast<NodeId>(a), g.targets[e])) ++count;
  return count;
}

// The graph plus `planted` edges (their Euclidean lengths).
unfurl::NeighbourGraph with_edges(const GapRoll& roll, const unfurl::NeighbourGraph& g,
                                  const std::vector<std::pair<NodeId, NodeId>>& planted) {
  std::vector<NodeId> from, to;
  std::vector<float> length;
  for (std::size_t a = 0; a < g.nodes(); ++a)
    for (auto e = g.offsets[a]; e < g.offsets[a + 1]; ++e)
      if (g.targets[e] > a) {
        from.push_back(static_cast<NodeId>(a));
        to.push_back(g.targets[e]);
        length.push_back(g.lengths[e]);
      }
  for (auto [a, b] : planted) {
    double s = 0;
    for (std::size_t c = 0; c < 3; ++c) {
      const double d = roll.points.row(a)[c] - roll.points.row(b)[c];
      s += d * d;
    }
    from.push_back(a);
    to.push_back(b);
    length.push_back(static_cast<float>(std::sqrt(s)));
  }
  return unfurl::graph_from_edges(g.nodes(), from, to, length);
}

// The point nearest to angle t, height y.
NodeId point_near(const GapRoll& roll, double t, double y) {
  NodeId best = 0;
  double best_d = INFINITY;
  for (std::size_t i = 0; i < roll.theta.size(); ++i) {
    const double d = std::hypot((roll.theta[i] - t) * roll.radius(t), roll.height[i] - y);
    if (d < best_d) best_d = d, best = static_cast<NodeId>(i);
  }
  return best;
}

// Three edges across the gap, from the inner layer at angle t to the next layer at t + 2 pi,
// far apart from each other (so that none is a short detour for another).
std::vector<std::pair<NodeId, NodeId>> planted_edges(const GapRoll& roll) {
  std::vector<std::pair<NodeId, NodeId>> out;
  for (auto [t, y] : {std::pair{1.0, 0.4}, {3.0, 1.0}, {5.0, 1.6}}) {
    NodeId a = point_near(roll, t, y), b = point_near(roll, t + 2 * M_PI, y);
    out.emplace_back(std::min(a, b), std::max(a, b));
  }
  return out;
}

// The length of the shortest route from a to b on the roll without the planted edge {a, b}:
// along the sheet, or along the sheet to another planted edge and across it. The sheet rolls
// up a flat rectangle (arc length s(theta), height), so along it the shortest path between
// two points is their straight-line distance in (s, height); the routes combine by
// Floyd-Warshall over the planted edges' ends.
double route_without(const GapRoll& roll, const std::vector<std::pair<NodeId, NodeId>>& planted,
                     std::pair<NodeId, NodeId> removed) {
  std::vector<NodeId> ends;
  for (auto [a, b] : planted) ends.insert(ends.end(), {a, b});
  const std::size_t m = ends.size();
  std::vector<double> s(m), d(m * m);
  for (std::size_t i = 0; i < m; ++i) s[i] = roll.arc_length(0, roll.theta[ends[i]]);
  for (std::size_t i = 0; i < m; ++i)
    for (std::size_t j = 0; j < m; ++j)
      d[i * m + j] = std::hypot(s[i] - s[j], roll.height[ends[i]] - roll.height[ends[j]]);
  for (std::size_t p = 0; p < planted.size(); ++p) {
    if (planted[p] == removed) continue;
    double w = 0;
    for (std::size_t c = 0; c < 3; ++c)
      w += std::pow(roll.points.row(ends[2 * p])[c] - roll.points.row(ends[2 * p + 1])[c], 2);
    d[2 * p * m + 2 * p + 1] = d[(2 * p + 1) * m + 2 * p] = std::sqrt(w);
  }
  for (std::size_t k = 0; k < m; ++k)
    for (std::size_t i = 0; i < m; ++i)
      for (std::size_t j = 0; j < m; ++j)
        d[i * m + j] = std::min(d[i * m + j], d[i * m + k] + d[k * m + j]);
  const auto at = [&](NodeId v) { return std::find(ends.begin(), ends.end(), v) - ends.begin(); };
  return d[at(removed.first) * m + at(removed.second)];
}

bool listed(const unfurl::ShortCircuitResult& r, std::pair<NodeId, NodeId> edge) {
  return std::any_of(r.worst.begin(), r.worst.end(),
                     [&](const auto& e) { return e.from == edge.first && e.to == edge.second; });
}

}  // namespace

TEST_CASE("short circuits: a clean narrow-gap roll at small k has no suspects", "[short_circuit]") {
  const GapRoll roll = gap_roll(2.0, 2.0, 11);
  const auto graph = knn_graph(roll, 6);
  // Analytic geometry: at k = 6 the neighbours lie within about 1.5 steps, far inside the
  // gap of 5 steps, so no edge crosses it.
  REQUIRE(gap_edges(roll, graph) == 0);
  const auto r = unfurl::find_short_circuits(graph);
  CHECK(r.summary.suspects == 0);
  CHECK(r.worst.empty());
  CHECK(r.summary.edges == graph.directed_edges() / 2);
  CHECK(r.summary.undecided == 0);
}

TEST_CASE("short circuits: edges planted across the gap are the suspects", "[short_circuit]") {
  // Balasubramanian and Schwartz (Science 2002): a few edges across the gap of a roll are
  // the short circuits. Here they are planted on a clean k = 6 graph, so the analytic
  // geometry of the roll says exactly which edges cross the gap: these three.
  const GapRoll roll = gap_roll(2.0, 2.0, 11);
  const auto planted = planted_edges(roll);
  const auto graph = with_edges(roll, knn_graph(roll, 6), planted);
  REQUIRE(gap_edges(roll, graph) == planted.size());

  const auto r = unfurl::find_short_circuits(graph);
  CHECK(r.summary.suspects == planted.size());
  for (auto edge : planted) CHECK(listed(r, edge));
  for (const auto& e : r.worst) {
    CHECK(crosses_gap(roll, e.from, e.to));
    CHECK(!e.separates);
    // The detour follows the sheet (once around the roll, or to another planted edge and
    // back): at least the analytic route (graph paths are polylines on the sheet, whose
    // chords fall short of its flat distances by under 0.1% at these edge lengths), and a
    // k = 6 graph path is not much longer (common practice, no source: within 30%).
    const double route = route_without(roll, planted, {e.from, e.to});
    INFO("edge " << e.from << "-" << e.to << ": detour " << e.detour << ", route " << route);
    REQUIRE(std::isfinite(e.detour));
    CHECK(e.detour >= 0.99 * route);
    CHECK(e.detour <= 1.3 * route);
    CHECK(route > 10 * e.length);  // what makes it a short circuit: the gap is 1, the route long
  }
}

TEST_CASE("short circuits: results do not depend on the thread count", "[short_circuit]") {
  const GapRoll roll = gap_roll(2.0, 2.0, 5);
  const auto graph = with_edges(roll, knn_graph(roll, 6), planted_edges(roll));
  const int before = omp_get_max_threads();
  omp_set_num_threads(1);
  const auto one = unfurl::find_short_circuits(graph);
  omp_set_num_threads(2);
  const auto two = unfurl::find_short_circuits(graph);
  omp_set_num_threads(before);
  REQUIRE(one.worst.size() == two.worst.size());
  REQUIRE(!one.worst.empty());
  for (std::size_t i = 0; i < one.worst.size(); ++i) {
    CHECK(one.worst[i].from == two.worst[i].from);
    CHECK(one.worst[i].to == two.worst[i].to);
    CHECK(one.worst[i].detour == two.worst[i].detour);
  }
  CHECK(one.summary.long_edges == two.summary.long_edges);
}

TEST_CASE("short circuits: an edge that is the only link separates its ends", "[short_circuit]") {
  // Two unit squares with a diagonal, joined by one edge of length 10: removing it
  // disconnects the graph (a bridge, by definition), and at both ends it is 10 times the
  // median of the other edges.
  const float d = std::sqrt(2.0f);
  std::vector<NodeId> from = {0, 1, 2, 3, 0, 4, 5, 6, 7, 4, 0};
  std::vector<NodeId> to = {1, 2, 3, 0, 2, 5, 6, 7, 4, 6, 4};
  std::vector<float> length = {1, 1, 1, 1, d, 1, 1, 1, 1, d, 10};
  const auto graph = unfurl::graph_from_edges(8, from, to, length);
  const auto r = unfurl::find_short_circuits(graph);
  REQUIRE(r.summary.suspects == 1);
  CHECK(r.worst[0].from == 0);
  CHECK(r.worst[0].to == 4);
  CHECK(r.worst[0].separates);
  CHECK(std::isinf(r.worst[0].stretch()));
  CHECK(r.worst[0].scale_from == 1.0f);
}

TEST_CASE("short circuits: a search out of budget is undecided, not a suspect", "[short_circuit]") {
  const GapRoll roll = gap_roll(2.0, 2.0, 11);
  const auto graph = with_edges(roll, knn_graph(roll, 6), planted_edges(roll));
  unfurl::ShortCircuitOptions o;
  o.max_settled = 3;  // far fewer nodes than any detour around the roll passes
  const auto r = unfurl::find_short_circuits(graph, o);
  CHECK(r.summary.suspects == 0);
  CHECK(r.summary.undecided >= 3);
  CHECK(r.summary.warnings.size() == 1);
}

TEST_CASE("short circuits: options name the field at fault", "[short_circuit]") {
  auto refused = [](unfurl::ShortCircuitOptions o, const char* field) {
    try {
      o.validate();
      FAIL("accepted");
    } catch (const unfurl::OptionError& e) {
      CHECK(e.field() == field);
    }
  };
  unfurl::ShortCircuitOptions o;
  o.length_factor = 1.0;
  refused(o, "ShortCircuitOptions.length_factor");
  o = {};
  o.detour_factor = NAN;
  refused(o, "ShortCircuitOptions.detour_factor");
  o = {};
  o.max_settled = 0;
  refused(o, "ShortCircuitOptions.max_settled");
}
