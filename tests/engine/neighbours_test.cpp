#include "engine/neighbours.hpp"

#include <omp.h>
#if defined(__x86_64__)
#include <xmmintrin.h>
#endif

#include <algorithm>
#include <atomic>
#include <catch2/catch.hpp>
#include <cmath>
#include <nanoflann.hpp>
#include <set>
#include <stdexcept>
#include <tuple>

#include "engine/detail/neighbour_search.hpp"
#include "engine/error.hpp"
#include "engine/random.hpp"
#include "tests/test_util.hpp"

using namespace unfurl;

namespace {

using test::random_points;

// The oracle: every distance in long double, sorted by (distance, index).
struct Brute {
  std::vector<NodeId> index;
  std::vector<float> distance;
};
Brute brute_knn(const PointSet& data, const PointSet& queries, std::size_t k, bool exclude_self) {
  Brute b;
  for (std::size_t q = 0; q < queries.rows; ++q) {
    std::vector<std::pair<long double, NodeId>> all;
    for (std::size_t i = 0; i < data.rows; ++i) {
      if (exclude_self && i == q) continue;
      long double s = 0;
      for (std::size_t j = 0; j < data.cols; ++j) {
        const long double diff = (long double)queries.row(q)[j] - data.row(i)[j];
        s += diff * diff;
      }
      all.push_back({s, static_cast<NodeId>(i)});
    }
    std::sort(all.begin(), all.end());
    for (std::size_t a = 0; a < k; ++a) {
      b.index.push_back(all[a].second);
      b.distance.push_back(static_cast<float>(std::sqrt(all[a].first)));
    }
  }
  return b;
}

void check_equal(const KnnResult& r, const Brute& b) {
  REQUIRE(r.index.size() == b.index.size());
  for (std::size_t i = 0; i < b.index.size(); ++i) {
    CHECK(r.index[i] == b.index[i]);
    CHECK(r.distance[i] == Approx(b.distance[i]).epsilon(1e-6).margin(1e-30));
  }
}

using EdgeSet = std::set<std::tuple<NodeId, NodeId>>;
EdgeSet edges_of(const NeighbourGraph& g) {
  EdgeSet s;
  for (std::size_t v = 0; v < g.nodes(); ++v)
    for (auto e = g.offsets[v]; e < g.offsets[v + 1]; ++e)
      s.insert({static_cast<NodeId>(v), g.targets[static_cast<std::size_t>(e)]});
  return s;
}

// CSR invariants of engine/graph.hpp: symmetric, sorted, lengths equal both ways.
void check_csr(const NeighbourGraph& g) {
  for (std::size_t v = 0; v < g.nodes(); ++v)
    for (auto e = g.offsets[v]; e < g.offsets[v + 1]; ++e) {
      const NodeId w = g.targets[static_cast<std::size_t>(e)];
      if (e > g.offsets[v]) REQUIRE(g.targets[static_cast<std::size_t>(e - 1)] < w);
      const auto b = g.targets.begin() + g.offsets[w], end = g.targets.begin() + g.offsets[w + 1];
      const auto back = std::lower_bound(b, end, static_cast<NodeId>(v));
      REQUIRE(back != end);
      REQUIRE(*back == v);
      REQUIRE(g.lengths[static_cast<std::size_t>(back - g.targets.begin())] ==
              g.lengths[static_cast<std::size_t>(e)]);
    }
}

}  // namespace

TEST_CASE("tree and scan equal brute force, ties and duplicates included", "[neighbours]") {
  // Oracle: brute force in long double in this test (common practice, no source).
  for (const bool grid : {false, true}) {
    for (const std::size_t d : {2u, 3u, 9u, 40u}) {
      const auto data = random_points(300, d, 11 + d, grid);
      const auto queries = random_points(40, d, 99 + d, grid);
      for (const std::size_t k : {1u, 7u, 25u}) {
        const auto self = brute_knn(data, data, k, true);
        const auto other = brute_knn(data, queries, k, false);
        for (const Search s : {Search::tree, Search::scan}) {
          INFO("grid " << grid << " d " << d << " k " << k << " " << search_name(s));
          check_equal(
              exact_knn(data, data, {.k = k, .search = s, .exclude_self = true, .block_rows = 64}),
              self);
          check_equal(exact_knn(data, queries,
                                {.k = k, .search = s, .exclude_self = false, .block_rows = 7}),
                      other);
        }
      }
    }
  }
}

TEST_CASE("scan stays exact when the data sit far from the origin", "[neighbours]") {
  // Large offsets make |x|^2 - 2x.y + |y|^2 cancel badly in float; the centring and the
  // certified rescan must still give the oracle's answer (brute force, no source).
  auto data = random_points(200, 30, 5, false);
  for (std::size_t i = 0; i < data.rows; ++i)
    for (std::size_t j = 0; j < data.cols; ++j) data.row(i)[j] = 1000.0f + 0.01f * data.row(i)[j];
  check_equal(exact_knn(data, data,
                        {.k = 5, .search = Search::scan, .exclude_self = true, .block_rows = 16}),
              brute_knn(data, data, 5, true));
}

#if defined(__x86_64__)
TEST_CASE("scan stays exact when float products flush to zero", "[neighbours]") {
  // A process built with fast-math flags runs with flush-to-zero and denormals-are-zero set:
  // then each product of tiny coordinates errs by up to 2^-126 absolutely, which no bound
  // relative to the norms covers. At these scales the coordinates and squared norms are normal
  // floats but many products are not; both scales returned wrong neighbours before the bound
  // had an absolute term. Oracle: brute force in double (no source).
  const auto set_flush = [](bool on) {
#pragma omp parallel
    {
      const unsigned bits = 0x8040;  // MXCSR: flush-to-zero (bit 15), denormals-are-zero (bit 6)
      _mm_setcsr(on ? (_mm_getcsr() | bits) : (_mm_getcsr() & ~bits));
    }
  };
  for (const float scale : {3e-20f, 1e-19f}) {
    INFO("scale " << scale);
    auto data = random_points(300, 40, 11, false);
    for (float& v : data.values) v *= scale;
    set_flush(true);
    const auto got = exact_knn(
        data, data, {.k = 5, .search = Search::scan, .exclude_self = true, .block_rows = 16});
    set_flush(false);
    check_equal(got, brute_knn(data, data, 5, true));
  }
}
#endif

TEST_CASE("points whose squared distances overflow float32 are refused, not searched",
          "[neighbours]") {
  // FLT_MAX is about 3.4e38 (IEEE 754 binary32), so a spread of 1e28 squares to infinity;
  // found by tests/apps/damaged_files_test.py as a crash in the graph build.
  auto pts = random_points(40, 3, 3, false);
  pts.row(7)[0] = -1.0e28f;
  for (const Search s : {Search::tree, Search::scan}) {
    GraphOptions o;
    o.neighbourhood = NearestK{5};
    o.search = s;
    CHECK_THROWS_AS(build_neighbour_graph(pts, o), unfurl::DataError);
    CHECK_THROWS_AS(
        exact_knn(pts, pts, {.k = 5, .search = s, .exclude_self = true, .block_rows = 16}),
        unfurl::DataError);
  }
  pts.row(7)[0] = -1.0e18f;  // squares to 1e36: still searched
  GraphOptions o;
  o.neighbourhood = NearestK{5};
  CHECK(build_neighbour_graph(pts, o).graph.nodes() == 40);
}

TEST_CASE("kNN graph is the union or mutual symmetrisation of the brute-force lists",
          "[neighbours]") {
  const auto pts = random_points(400, 3, 3, false);
  const std::size_t k = 6;
  const auto b = brute_knn(pts, pts, k, true);
  EdgeSet unions, mutuals;
  for (std::size_t i = 0; i < pts.rows; ++i)
    for (std::size_t a = 0; a < k; ++a) {
      const NodeId j = b.index[i * k + a];
      unions.insert({static_cast<NodeId>(i), j});
      unions.insert({j, static_cast<NodeId>(i)});
      const auto* back = &b.index[j * k];
      if (std::find(back, back + k, static_cast<NodeId>(i)) != back + k)
        mutuals.insert({static_cast<NodeId>(i), j});
    }
  for (const Search s : {Search::tree, Search::scan}) {
    GraphOptions o;
    o.neighbourhood = NearestK{k};
    o.search = s;
    const auto u = build_neighbour_graph(pts, o);
    check_csr(u.graph);
    CHECK(edges_of(u.graph) == unions);
    CHECK(u.summary.search_used == s);
    CHECK(u.summary.degree_min >= k);
    o.mutual = true;
    const auto m = build_neighbour_graph(pts, o);
    check_csr(m.graph);
    CHECK(edges_of(m.graph) == mutuals);
  }
}

TEST_CASE("radius graph is inclusive at the boundary", "[neighbours]") {
  // Points 0, 1, 3 and 6 on a line: the pair (1, 3) is exactly 2 apart, representable in
  // float and double alike (SciPy's query_pairs counts distance <= r too).
  PointSet p(4, 2);
  const float xs[] = {0, 1, 3, 6};
  for (std::size_t i = 0; i < 4; ++i) p.row(i)[0] = xs[i];
  for (const Search s : {Search::tree, Search::scan}) {
    GraphOptions o;
    o.neighbourhood = WithinRadius{2.0};
    o.search = s;
    const auto g = build_neighbour_graph(p, o);
    CHECK(edges_of(g.graph) == EdgeSet{{0, 1}, {1, 0}, {1, 2}, {2, 1}});
    CHECK(g.summary.isolated_nodes == 1);
    CHECK(!g.summary.warnings.empty());
    o.neighbourhood = WithinRadius{std::nextafter(2.0, 0.0)};
    CHECK(edges_of(build_neighbour_graph(p, o).graph) == EdgeSet{{0, 1}, {1, 0}});
  }
}

TEST_CASE("radius graph equals brute force on random data", "[neighbours]") {
  for (const std::size_t d : {3u, 20u}) {
    const auto pts = random_points(300, d, 17, false);
    const double r = d == 3 ? 0.6 : 4.5;
    EdgeSet expect;
    for (std::size_t i = 0; i < pts.rows; ++i)
      for (std::size_t j = 0; j < pts.rows; ++j)
        if (i != j && detail::exact_squared(pts.row(i), pts.row(j), d) <= r * r)
          expect.insert({static_cast<NodeId>(i), static_cast<NodeId>(j)});
    REQUIRE(!expect.empty());
    for (const Search s : {Search::tree, Search::scan}) {
      GraphOptions o;
      o.neighbourhood = WithinRadius{r};
      o.search = s;
      const auto g = build_neighbour_graph(pts, o);
      check_csr(g.graph);
      CHECK(edges_of(g.graph) == expect);
    }
  }
}

TEST_CASE("duplicate rows are merged, counted and mapped to their first row", "[neighbours]") {
  const std::size_t base = 200;
  auto pts = random_points(base, 3, 21, false);
  PointSet all(base + 20, 3);  // 10% repeated rows: rows base.. copy rows 0, 10, ..., 0, 10...
  std::copy(pts.values.begin(), pts.values.end(), all.values.begin());
  for (std::size_t c = 0; c < 20; ++c) std::copy_n(pts.row((c % 10) * 10), 3, all.row(base + c));
  all.row(5)[0] = -0.0f;  // -0 and +0 are the same coordinate
  all.row(6)[0] = 0.0f;
  all.row(6)[1] = all.row(5)[1];
  all.row(6)[2] = all.row(5)[2];
  GraphOptions o;
  o.neighbourhood = NearestK{5};
  const auto g = build_neighbour_graph(all, o);
  CHECK(g.summary.duplicate_groups == 11);
  CHECK(g.summary.duplicate_rows == 21);
  CHECK(g.graph.nodes() == base + 20 - 21);
  REQUIRE(g.node_of_point.size() == all.rows);
  for (std::size_t r = 0; r < all.rows; ++r) {
    const std::size_t first = g.point_of_node[g.node_of_point[r]];
    CHECK(first <= r);
    for (std::size_t j = 0; j < 3; ++j) CHECK(all.row(first)[j] == all.row(r)[j]);
  }
  CHECK(g.point_of_node[g.node_of_point[base + 3]] == 30);
  CHECK(g.node_of_point[6] == g.node_of_point[5]);
  CHECK(g.summary.length_min > 0.0f);

  o.keep_duplicates = true;
  o.duplicate_epsilon = 1e-4f;
  const auto kept = build_neighbour_graph(all, o);
  check_csr(kept.graph);
  CHECK(kept.graph.nodes() == all.rows);
  CHECK(kept.graph.degree(base + 3) == 1);
  CHECK(kept.graph.targets[static_cast<std::size_t>(kept.graph.offsets[base + 3])] == 30);
  CHECK(kept.graph.lengths[static_cast<std::size_t>(kept.graph.offsets[base + 3])] == 1e-4f);
}

TEST_CASE("rows equal only in float32 (different row keys) are not merged", "[neighbours]") {
  const std::size_t base = 50;
  auto pts = random_points(base, 2, 5, false);
  PointSet all(base + 2, 2);
  std::copy(pts.values.begin(), pts.values.end(), all.values.begin());
  std::copy_n(pts.row(3), 2, all.row(base));      // equal floats, another row of the file
  std::copy_n(pts.row(4), 2, all.row(base + 1));  // equal floats, the same values as read
  all.row_keys.resize(all.rows);
  for (std::size_t r = 0; r < base; ++r) all.row_keys[r] = 1000 + r;
  all.row_keys[base] = 7;
  all.row_keys[base + 1] = all.row_keys[4];
  GraphOptions o;
  o.neighbourhood = NearestK{4};
  const auto g = build_neighbour_graph(all, o);
  CHECK(g.summary.duplicate_rows == 1);
  CHECK(g.graph.nodes() == base + 1);
  CHECK(g.node_of_point[base + 1] == g.node_of_point[4]);
  CHECK(g.node_of_point[base] != g.node_of_point[3]);
  CHECK(std::any_of(g.summary.warnings.begin(), g.summary.warnings.end(),
                    [](const std::string& w) { return w.find("differ in the input") != w.npos; }));
  all.row_keys.clear();  // without keys the float values decide alone
  CHECK(build_neighbour_graph(all, o).summary.duplicate_rows == 2);
}

TEST_CASE("bad options and data are refused with the field named", "[neighbours]") {
  const auto pts = random_points(20, 3, 1, false);
  GraphOptions o;
  o.neighbourhood = NearestK{0};
  CHECK_THROWS_WITH(build_neighbour_graph(pts, o), "NearestK.k: must be at least 1, got 0");
  o.neighbourhood = NearestK{20};
  CHECK_THROWS_AS(build_neighbour_graph(pts, o), OptionError);
  // k and radius together cannot be written (Neighbourhood holds one); a zero radius, which
  // once meant "no radius", is refused like any other non-positive one.
  o.neighbourhood = WithinRadius{0.0};
  CHECK_THROWS_WITH(build_neighbour_graph(pts, o), Catch::Contains("WithinRadius.radius"));
  o.neighbourhood = WithinRadius{-1.0};
  CHECK_THROWS_AS(build_neighbour_graph(pts, o), OptionError);
  // A radius under which every point is isolated is an error, not an empty graph.
  o.neighbourhood = WithinRadius{1e-6};
  CHECK_THROWS_WITH(build_neighbour_graph(pts, o), Catch::Contains("closest pair"));
  CHECK_THROWS_AS(build_neighbour_graph(pts, o), DataError);
  // Too few distinct points for k.
  PointSet same(10, 2);
  GraphOptions k3;
  k3.neighbourhood = NearestK{3};
  CHECK_THROWS_AS(build_neighbour_graph(same, k3), DataError);
  auto bad = pts;
  bad.row(7)[2] = std::nanf("");
  CHECK_THROWS_WITH(build_neighbour_graph(bad, k3),
                    "points: row 7, column 2 is not a finite number");
}

TEST_CASE("batched exact distances equal one-at-a-time ones bit for bit", "[neighbours]") {
  // The contract of exact_squared (neighbour_search.hpp): both back ends and every caller get
  // the same bits, so the scan's batched recomputation must match the tree's single one.
  for (const std::size_t d : {1u, 3u, 784u}) {
    const auto pts = random_points(12, d, 40 + d, false);
    for (std::size_t count = 0; count <= 11; ++count) {
      std::vector<const float*> rows;
      for (std::size_t c = 0; c < count; ++c) rows.push_back(pts.row(c + 1));
      std::vector<double> batch(count, -1.0);
      detail::exact_squared_batch(pts.row(0), rows.data(), count, d, batch.data());
      for (std::size_t c = 0; c < count; ++c) {
        INFO("d " << d << ", count " << count << ", row " << c);
        CHECK(batch[c] == detail::exact_squared(pts.row(0), rows[c], d));
        CHECK(batch[c] > 0.0);
      }
    }
  }
}

TEST_CASE("results do not depend on the thread count", "[neighbours]") {
  // 20,000 points x 8 neighbours: 160,000 edges, whose rows the CSR assembly splits among as
  // many tasks as there are threads.
  const auto pts = random_points(20000, 3, 8, false);
  GraphOptions o;
  o.neighbourhood = NearestK{8};
  const int threads = omp_get_max_threads();
  const auto wide = random_points(700, 60, 8, true);  // grid values: many ties
  omp_set_num_threads(1);
  const auto one = build_neighbour_graph(pts, o);
  const auto scan_one = exact_knn(
      wide, wide, {.k = 9, .search = Search::scan, .exclude_self = true, .block_rows = 64});
  omp_set_num_threads(std::max(2, threads));
  const auto many = build_neighbour_graph(pts, o);
  const auto scan_many = exact_knn(
      wide, wide, {.k = 9, .search = Search::scan, .exclude_self = true, .block_rows = 64});
  omp_set_num_threads(threads);
  CHECK(one.graph.targets == many.graph.targets);
  CHECK(one.graph.lengths == many.graph.lengths);
  CHECK(scan_one.index == scan_many.index);
  CHECK(scan_one.distance == scan_many.distance);
}

namespace {
// nanoflann's dataset contract over a PointSet, for its own serial build below.
struct Cloud {
  const PointSet& points;
  std::size_t kdtree_get_point_count() const { return points.rows; }
  float kdtree_get_pt(NodeId i, std::size_t d) const { return points.row(i)[d]; }
  template <class Box>
  bool kdtree_get_bbox(Box&) const {
    return false;
  }
};
}  // namespace

TEST_CASE("the k-d tree built in parallel is nanoflann's serial tree", "[neighbours]") {
  // Outside reference: nanoflann 1.4's own single-threaded buildIndex (Debian's
  // libnanoflann-dev) over the same points and leaf size. The parallel build splits the top
  // levels itself and hands the subtrees to nanoflann; the leaf order (every point's place
  // in the tree) must be the same on 1 and on 2 threads.
  for (const std::size_t d : {std::size_t{3}, std::size_t{5}}) {
    const auto pts = random_points(30000, d, 11 + d, false);
    const Cloud cloud{pts};
    using Serial =
        nanoflann::KDTreeSingleIndexAdaptor<nanoflann::L2_Simple_Adaptor<float, Cloud, double>,
                                            Cloud, -1, NodeId>;
    const Serial serial(static_cast<int>(d), cloud,
                        nanoflann::KDTreeSingleIndexAdaptorParams(detail::kTreeLeafSize));
    const std::vector<NodeId> want(serial.vAcc.begin(), serial.vAcc.end());
    const int threads = omp_get_max_threads();
    omp_set_num_threads(1);
    const auto one = detail::tree_leaf_order(pts);
    omp_set_num_threads(2);
    const auto two = detail::tree_leaf_order(pts);
    omp_set_num_threads(threads);
    CHECK(one == want);
    CHECK(two == want);
  }
}

TEST_CASE("an exception inside a parallel region reaches the caller", "[neighbours][parallel]") {
  std::atomic<int> ran{0};
  CHECK_THROWS_WITH(detail::parallel_chunks(100, 1, {}, "test",
                                            [&](std::size_t b, std::size_t) {
                                              ++ran;
                                              if (b == 37) throw DataError("chunk 37 failed");
                                            }),
                    "chunk 37 failed");
  CHECK(ran >= 1);
  // A stop request surfaces as InterruptedError from the stage itself.
  std::atomic<bool> flag{true};
  GraphOptions o;
  CHECK_THROWS_AS(build_neighbour_graph(random_points(2000, 3, 2, false), o, StopToken{&flag}),
                  InterruptedError);
}
