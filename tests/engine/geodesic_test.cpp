#include "engine/geodesic.hpp"

#include <omp.h>

#include <algorithm>
#include <atomic>
#include <catch2/catch.hpp>
#include <cmath>
#include <numeric>
#include <random>

#include "engine/detail/dijkstra.hpp"
#include "engine/error.hpp"
#include "tests/test_util.hpp"

using unfurl::NodeId;
using unfurl::test::Edge;

TEST_CASE("dijkstra on a path graph gives the prefix sums of the lengths", "[geodesic]") {
  // Known answer: on a path the only route between two nodes is the path itself.
  const std::vector<float> lengths{0.5f, 1.25f, 2.0f, 0.75f};
  std::vector<Edge> edges;
  for (NodeId i = 0; i < lengths.size(); ++i) edges.push_back({i, i + 1, lengths[i]});
  const auto g = unfurl::test::graph_from_edges(5, edges);
  const std::vector<NodeId> sources{0, 4, 2};
  const auto rows = unfurl::geodesic_rows(g, {sources}).rows;
  REQUIRE(rows.rows == 3);
  REQUIRE(rows.cols == 5);
  CHECK(rows.sources == sources);
  const std::vector<double> from0{0.0, 0.5, 1.75, 3.75, 4.5};
  for (std::size_t j = 0; j < 5; ++j) {
    CHECK(rows.row(0)[j] == Approx(from0[j]));
    CHECK(rows.row(1)[j] == Approx(4.5 - from0[j]));
    CHECK(rows.row(2)[j] == Approx(std::abs(from0[j] - 1.75)));
  }
}

TEST_CASE("dijkstra rows equal Floyd-Warshall on random graphs", "[geodesic]") {
  for (std::uint64_t seed : {1u, 2u, 3u}) {
    const auto g = unfurl::test::random_connected_graph(60, 120, seed);
    const auto oracle = unfurl::test::floyd_warshall(g);  // Floyd 1962, see test_util.hpp
    const auto rows = unfurl::geodesic_rows(g, {unfurl::EveryNode{}}).rows;
    REQUIRE(rows.rows == 60);
    for (std::size_t i = 0; i < 60; ++i)
      for (std::size_t j = 0; j < 60; ++j)
        REQUIRE(rows.row(i)[j] == Approx(oracle[i * 60 + j]).epsilon(1e-6));
  }
}

TEST_CASE("rows do not depend on the thread count", "[geodesic]") {
  const auto g = unfurl::test::random_connected_graph(300, 900, 9);
  const int before = omp_get_max_threads();
  omp_set_num_threads(1);
  const auto one = unfurl::geodesic_rows(g, {unfurl::EveryNode{}}).rows;
  omp_set_num_threads(2);
  const auto two = unfurl::geodesic_rows(g, {unfurl::EveryNode{}}).rows;
  omp_set_num_threads(before);
  CHECK(one.values == two.values);
}

TEST_CASE("an unreachable node is an error that says how many", "[geodesic]") {
  // Two components: {0, 1, 2} and {3, 4}. The DataError is thrown inside the parallel region
  // and must reach the caller.
  const auto g = unfurl::test::graph_from_edges(5, {{0, 1, 1.f}, {1, 2, 1.f}, {3, 4, 1.f}});
  const std::vector<NodeId> sources{0, 1, 2, 3};
  CHECK_THROWS_AS(unfurl::geodesic_rows(g, {sources}).rows, unfurl::DataError);
  const std::vector<NodeId> first{0};
  CHECK_THROWS_WITH(unfurl::geodesic_rows(g, {first}).rows,
                    Catch::Contains("2 of 5 graph nodes are unreachable from node 0"));
  // All pairs: checked from node 0 before any run, so one message whatever the threads.
  CHECK_THROWS_WITH(unfurl::geodesic_rows(g, {unfurl::EveryNode{}}).rows,
                    Catch::Contains("2 of 5 graph nodes are unreachable from node 0"));
}

TEST_CASE("path lengths beyond float32's range are refused for the range", "[geodesic]") {
  // float32's largest value is about 3.4e38 (IEEE 754 binary32). A path of 4 edges of 1e38
  // sums to 4e38: in float32 that is infinite, and a reachable node would look unreachable.
  // Both bounds of the check exceed the range here: (N - 1) x longest = 4e38 and the sum of
  // all edges = 4e38.
  const auto huge = unfurl::test::graph_from_edges(
      5, {{0, 1, 1e38f}, {1, 2, 1e38f}, {2, 3, 1e38f}, {3, 4, 1e38f}});
  const std::vector<NodeId> first{0};
  CHECK_THROWS_AS(unfurl::geodesic_rows(huge, {first}).rows, unfurl::DataError);
  CHECK_THROWS_WITH(unfurl::geodesic_rows(huge, {first}).rows,
                    Catch::Contains("float32's range") && Catch::Contains("longest edge 1e+38") &&
                        !Catch::Contains("unreachable"));
  CHECK_THROWS_WITH(unfurl::geodesic_rows(huge, {unfurl::EveryNode{}}).rows,
                    Catch::Contains("float32's range"));
  // One long edge among short ones: no path can exceed the sum of all edges (3e38 + 3), so
  // the rows are computed, and they are exact prefix sums.
  const auto one_long =
      unfurl::test::graph_from_edges(5, {{0, 1, 3e38f}, {1, 2, 1.f}, {2, 3, 1.f}, {3, 4, 1.f}});
  const auto rows = unfurl::geodesic_rows(one_long, {first}).rows;
  CHECK(rows.row(0)[1] == 3e38f);
  CHECK(std::isfinite(rows.row(0)[4]));
}

TEST_CASE("bad sources are option errors, malformed graphs data errors", "[geodesic]") {
  auto g = unfurl::test::graph_from_edges(3, {{0, 1, 1.f}, {1, 2, 1.f}});
  const std::vector<NodeId> beyond{3};
  CHECK_THROWS_AS(unfurl::geodesic_rows(g, {beyond}), unfurl::OptionError);
  CHECK_THROWS_WITH(unfurl::geodesic_rows(g, {beyond}).rows, Catch::Contains("source 0 is node 3"));
  g.targets[0] = 7;
  const std::vector<NodeId> ok{0};
  CHECK_THROWS_WITH(unfurl::geodesic_rows(g, {ok}).rows, Catch::Contains("points to node 7"));
  g.targets[0] = 1;
  g.lengths[1] = std::nanf("");
  CHECK_THROWS_AS(unfurl::geodesic_rows(g, {ok}).rows, unfurl::DataError);
}

TEST_CASE("a stop request stops dijkstra", "[geodesic]") {
  const auto g = unfurl::test::random_connected_graph(200, 400, 4);
  std::atomic<bool> flag{true};
  CHECK_THROWS_AS(unfurl::geodesic_rows(g, {unfurl::EveryNode{}}, unfurl::StopToken{&flag}),
                  unfurl::InterruptedError);
  flag = false;
  CHECK_NOTHROW(unfurl::geodesic_rows(g, {unfurl::EveryNode{}}, unfurl::StopToken{&flag}));
}

TEST_CASE("duplicate points: zero-length edges give zero distances", "[geodesic]") {
  const auto g = unfurl::test::graph_from_edges(3, {{0, 1, 0.f}, {1, 2, 2.f}});
  const std::vector<NodeId> s{0};
  const auto rows = unfurl::geodesic_rows(g, {s}).rows;
  CHECK(rows.row(0)[1] == 0.0f);
  CHECK(rows.row(0)[2] == 2.0f);
}

TEST_CASE("the radix heap pops keys in the order a full sort gives, on a monotone workload",
          "[geodesic]") {
  // Reference: std::stable_sort of every pushed key (common practice, no source). The workload
  // is Dijkstra's: each push is at least the last popped key, here plus a random step that is
  // sometimes zero (equal keys), tiny (keys that share high bits) or large.
  unfurl::detail::DistanceHeap<float> heap;
  std::mt19937_64 random(7);
  std::uniform_real_distribution<float> step(0.0f, 1.0f);
  std::vector<float> pushed, popped;
  float last = 0.0f;
  heap.push(0.0f, 0);
  pushed.push_back(0.0f);
  while (pushed.size() < 20000 || !heap.empty()) {
    const auto top = heap.pop();
    popped.push_back(top.key);
    REQUIRE(top.key >= last);
    last = top.key;
    for (int i = 0; i < 3 && pushed.size() < 20000; ++i) {
      const float u = step(random);
      const float key = u < 0.2f ? last : u < 0.5f ? std::nextafter(last, 1e30f) : last + 10 * u;
      heap.push(key, static_cast<NodeId>(pushed.size()));
      pushed.push_back(key);
    }
  }
  std::stable_sort(pushed.begin(), pushed.end());
  CHECK(popped == pushed);
}

TEST_CASE("all-pairs rows are exactly symmetric and take each pair from a full run", "[geodesic]") {
  // all_geodesic_rows computes each pair once and mirrors it; full runs from every source
  // (checked against Floyd-Warshall above) may round d(i, j) and d(j, i) a bit apart, and the
  // pair must hold one of the two. Graphs: random, and one with many equal lengths (ties).
  auto ties = unfurl::test::random_connected_graph(200, 500, 12);
  for (float& w : ties.lengths) w = std::round(w * 4.0f) / 4.0f + 0.25f;
  for (const auto& g : {unfurl::test::random_connected_graph(250, 700, 11), ties}) {
    const std::size_t n = g.nodes();
    const auto all = unfurl::geodesic_rows(g, {unfurl::EveryNode{}}).rows;
    std::vector<NodeId> every(n);
    std::iota(every.begin(), every.end(), NodeId{0});
    const auto full = unfurl::geodesic_rows(g, {every}).rows;
    for (std::size_t i = 0; i < n; ++i) {
      REQUIRE(all.row(i)[i] == 0.0f);
      for (std::size_t j = 0; j < n; ++j) {
        REQUIRE(all.row(i)[j] == all.row(j)[i]);
        const float v = all.row(i)[j];
        REQUIRE((v == full.row(i)[j] || v == full.row(j)[i]));
      }
    }
  }
}

TEST_CASE("Dial's buckets and the radix heap both give Floyd-Warshall's distances", "[geodesic]") {
  // Oracle: Floyd-Warshall (Floyd 1962, test_util.hpp). The workspace picks the bucket queue
  // when the lengths span a small enough ratio; a single very short or zero edge sends the
  // same graph to the heap. Both must agree with the oracle (the spread graph's lengths run
  // from 1e-3 to 1).
  auto spread = unfurl::test::random_connected_graph(300, 900, 21);
  for (std::size_t e = 0; e < spread.lengths.size(); ++e)
    spread.lengths[e] = std::pow(10.0f, -3.0f * (spread.lengths[e] - 0.1f));
  auto tiny = spread, zero = spread;
  tiny.lengths[0] = 1e-9f;  // the ratio 1e9 needs far more buckets than the ring may hold
  zero.lengths[0] = 0.0f;
  for (unfurl::NeighbourGraph* g : {&tiny, &zero}) {
    // The CSR holds each edge twice: give the entry back from node 0's first neighbour the
    // same length.
    const auto target = g->targets[0];
    for (auto e = g->offsets[target]; e < g->offsets[target + 1]; ++e)
      if (g->targets[static_cast<std::size_t>(e)] == 0)
        g->lengths[static_cast<std::size_t>(e)] = g->lengths[0];
  }
  REQUIRE(spread.targets[0] != 0);
  REQUIRE(unfurl::detail::DijkstraWorkspace(spread).uses_buckets());
  REQUIRE_FALSE(unfurl::detail::DijkstraWorkspace(tiny).uses_buckets());
  REQUIRE_FALSE(unfurl::detail::DijkstraWorkspace(zero).uses_buckets());
  for (const auto* g : {&spread, &tiny, &zero}) {
    const auto oracle = unfurl::test::floyd_warshall(*g);
    const auto rows = unfurl::geodesic_rows(*g, {unfurl::EveryNode{}}).rows;
    for (std::size_t i = 0; i < 300; ++i)
      for (std::size_t j = 0; j < 300; ++j)
        REQUIRE(rows.row(i)[j] == Approx(oracle[i * 300 + j]).epsilon(1e-5).margin(1e-6));
  }
}

TEST_CASE("rows stay exact where float32 keys swallow short edges", "[geodesic]") {
  // A path of 400 nodes with edges of 100 and, every tenth, one of 0.001: the length ratio
  // fits the bucket ring (buckets of 0.0005), but beyond 32,768 a float32 key's ulp (0.0039)
  // swallows the 0.001 edge, which then stays in its bucket. Oracle: Floyd-Warshall in double
  // (Floyd 1962, test_util.hpp); the swallowed edges cost float32 at most 40 x 0.001 on
  // distances near 4e4, 1e-6 relative.
  constexpr std::size_t n = 400;
  std::vector<Edge> edges;
  for (NodeId i = 0; i + 1 < n; ++i) edges.push_back({i, i + 1, i % 10 == 0 ? 0.001f : 100.0f});
  const auto g = unfurl::test::graph_from_edges(n, edges);
  // Full rows and the all-pairs runs go to delta-stepping's buckets (width from the lengths'
  // lower quartile, 50), which rescan a node that a swallowed edge fails to move and need no
  // fallback; Dial's queue serves only graphs those buckets refuse.
  unfurl::detail::DeltaBuckets delta;
  REQUIRE(delta.setup(g));
  unfurl::detail::DijkstraWorkspace work(g);
  std::vector<float> row(n);
  work.run(0, row.data());
  const auto oracle = unfurl::test::floyd_warshall(g);
  for (std::size_t j = 0; j < n; ++j) REQUIRE(row[j] == Approx(oracle[j]).epsilon(1e-5));
  const auto rows = unfurl::geodesic_rows(g, {unfurl::EveryNode{}}).rows;
  for (std::size_t i = 0; i < n; ++i)
    for (std::size_t j = 0; j < n; ++j)
      REQUIRE(rows.row(i)[j] == Approx(oracle[i * n + j]).epsilon(1e-5).margin(1e-6));
}

TEST_CASE("the geodesic stage returns its summary with the rows", "[geodesic]") {
  const auto g = unfurl::test::random_connected_graph(30, 30, 1);
  const std::vector<NodeId> three{4, 0, 4};
  const auto listed = unfurl::geodesic_rows(g, {three});
  CHECK(listed.rows.sources == three);
  CHECK(listed.summary.sources == 3);
  CHECK(listed.summary.nodes == 30);
  CHECK(listed.summary.threads >= 1);
  const auto every = unfurl::geodesic_rows(g, {unfurl::EveryNode{}});
  CHECK(every.rows.rows == 30);
  CHECK(every.summary.sources == 30);
  // A listed source's row matches that node's row among all of them, up to float32 rounding
  // of sums taken along different runs (see the all-pairs test above).
  for (std::size_t j = 0; j < 30; ++j)
    CHECK(every.rows.row(4)[j] == Approx(listed.rows.row(0)[j]).epsilon(1e-5));
}

TEST_CASE("Dial's buckets take graphs delta-stepping refuses, and fall back to the heap",
          "[geodesic]") {
  // A path of 1,000 nodes whose edges alternate 1 and 40,000: half the edges are short, so
  // delta-stepping's width (half the lower quartile, 0.5) would need a ring of 80,000 buckets
  // and it refuses; Dial's ring (same width, up to 2^18 buckets) takes it. Beyond 2^24 bucket
  // widths (keys past 8.4e6) a float32 key's ulp swallows the edge of 1, the run is not exact
  // and is redone with the radix heap. Oracle: on a path the distance is the sum of the
  // lengths in between (analytic), summed here in double; float32 sums drift from it by at
  // most 999 roundings of 2^-24 relative each (6e-5), whatever the queue.
  constexpr std::size_t n = 1000;
  std::vector<Edge> edges;
  for (NodeId i = 0; i + 1 < n; ++i) edges.push_back({i, i + 1, i % 2 == 0 ? 1.0f : 40000.0f});
  const auto g = unfurl::test::graph_from_edges(n, edges);
  unfurl::detail::DeltaBuckets delta;
  REQUIRE_FALSE(delta.setup(g));
  unfurl::detail::DijkstraWorkspace work(g);
  REQUIRE(work.uses_buckets());
  std::vector<float> row(n);
  CHECK(work.run(0, row.data()) == 0);
  CHECK_FALSE(work.uses_buckets());  // the first run found it out and fell back
  double along = 0.0;
  for (std::size_t j = 0; j < n; ++j) {
    REQUIRE(row[j] == Approx(along).epsilon(6e-5));
    if (j + 1 < n) along += j % 2 == 0 ? 1.0 : 40000.0;
  }
}
