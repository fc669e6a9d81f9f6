#include "io/graph_file.hpp"

#include <catch2/catch.hpp>
#include <cmath>
#include <limits>
#include <map>

#include "engine/error.hpp"
#include "engine/random.hpp"
#include "io/hdf5_file.hpp"
#include "tests/io/temp_folder.hpp"

namespace {

// A ring of n nodes with chords i -- i+3, both directions stored, built from an edge map so
// that the CSR arrays are derived independently of the code under test.
unfurl::NeighbourGraph ring_with_chords(std::size_t n, std::uint64_t seed) {
  unfurl::Random rng(seed);
  std::map<std::pair<unfurl::NodeId, unfurl::NodeId>, float> edges;
  const auto add = [&](std::size_t a, std::size_t b) {
    const float len = static_cast<float>(rng.uniform() * 5.0);
    edges[{static_cast<unfurl::NodeId>(a), static_cast<unfurl::NodeId>(b)}] = len;
    edges[{static_cast<unfurl::NodeId>(b), static_cast<unfurl::NodeId>(a)}] = len;
  };
  for (std::size_t i = 0; i < n; ++i) {
    add(i, (i + 1) % n);
    add(i, (i + 3) % n);
  }
  unfurl::NeighbourGraph g;
  g.offsets.assign(n + 1, 0);
  for (const auto& [key, len] : edges) {
    ++g.offsets[key.first + 1];
    g.targets.push_back(key.second);
    g.lengths.push_back(len);
  }
  for (std::size_t i = 0; i < n; ++i) g.offsets[i + 1] += g.offsets[i];
  return g;
}

// Writes raw CSR arrays as a graph file would, to feed the reader broken graphs.
void write_raw(const std::filesystem::path& p, const std::vector<std::int64_t>& offsets,
               const std::vector<std::uint32_t>& targets, const std::vector<float>& lengths) {
  unfurl::io::H5Writer out(p);
  out.write("/graph/offsets", offsets, {offsets.size()});
  out.write("/graph/targets", targets, {targets.size()});
  out.write("/graph/lengths", lengths, {lengths.size()});
  out.set_int_attribute("/", "format_version", 1);
  out.close();
}

}  // namespace

TEST_CASE("graph file round trips the graph, rows, node arrays and attributes", "[graph_file]") {
  unfurl::test::TempFolder dir;
  const auto g = ring_with_chords(40, 3);
  std::vector<std::int64_t> rows;
  for (std::int64_t i = 0; i < 40; ++i) rows.push_back(1000 - i);
  std::vector<double> component(40, 0.0);
  component[7] = 1.0;
  const nlohmann::json attrs = {{"parameters", {{"k", 4}, {"mutual", 0}}}, {"components", 1}};
  unfurl::io::write_graph(dir / "g.h5", g, attrs, rows,
                          {{"/graph/nodes/component", component, {40}, {{"method", "bfs"}}}});
  const auto read = unfurl::io::read_graph(dir / "g.h5");
  CHECK(read.graph.offsets == g.offsets);
  CHECK(read.graph.targets == g.targets);
  CHECK(read.graph.lengths == g.lengths);
  CHECK(read.rows == rows);
  REQUIRE(read.node_arrays.size() == 1);
  CHECK(read.node_arrays[0].path == "/graph/nodes/component");
  CHECK(read.node_arrays[0].values == component);
  CHECK(read.node_arrays[0].attributes.at("method") == "bfs");
  CHECK(read.attributes == attrs);
  CHECK(dir.entries() == std::vector<std::string>{"g.h5"});
}

TEST_CASE("graph file reader names each broken invariant", "[graph_file]") {
  unfurl::test::TempFolder dir;
  const auto p = dir / "bad.h5";
  // A valid 3-node path 0 - 1 - 2 to start from.
  const std::vector<std::int64_t> off = {0, 1, 3, 4};
  const std::vector<std::uint32_t> tgt = {1, 0, 2, 1};
  const std::vector<float> len = {1.0f, 1.0f, 2.0f, 2.0f};
  write_raw(p, off, tgt, len);
  CHECK(unfurl::io::read_graph(p).graph.nodes() == 3);

  struct Case {
    const char* what;
    std::vector<std::int64_t> offsets;
    std::vector<std::uint32_t> targets;
    std::vector<float> lengths;
    const char* message;
  };
  const float nan = std::numeric_limits<float>::quiet_NaN();
  const float inf = std::numeric_limits<float>::infinity();
  const std::vector<Case> cases = {
      {"offsets not monotone", {0, 3, 1, 4}, tgt, len, "/graph/offsets: decreases at node 1"},
      {"offsets do not start at 0", {1, 1, 3, 4}, tgt, len, "/graph/offsets: does not start"},
      {"last offset != targets", {0, 1, 3, 3}, tgt, len, "/graph/offsets: ends at 3"},
      {"target out of range", off, {1, 0, 3, 1}, len, "/graph/targets: node 1 has neighbour 3"},
      {"negative length", off, tgt, {1.0f, 1.0f, -2.0f, -2.0f}, "/graph/lengths: edge 1 -> 2"},
      {"NaN length", off, tgt, {nan, 1.0f, 2.0f, 2.0f}, "/graph/lengths: edge 0 -> 1"},
      {"infinite length", off, tgt, {1.0f, 1.0f, inf, inf}, "/graph/lengths"},
      {"lengths shorter than targets", off, tgt, {1.0f, 1.0f, 2.0f}, "/graph/lengths: has 3"},
      {"reverse edge missing", {0, 1, 2, 3}, {1, 2, 1}, {1.0f, 2.0f, 2.0f}, "no reverse edge"},
      {"lengths differ by direction", off, tgt, {1.0f, 1.5f, 2.0f, 2.0f}, "one way and"},
      {"unsorted neighbours", {0, 1, 3, 4}, {1, 2, 0, 1}, len, "not sorted"},
      {"empty offsets", {}, {}, {}, "/graph/offsets: is empty"},
  };
  for (const Case& c : cases) {
    CAPTURE(c.what);
    write_raw(p, c.offsets, c.targets, c.lengths);
    CHECK_THROWS_AS(unfurl::io::read_graph(p), unfurl::DataError);
    CHECK_THROWS_WITH(unfurl::io::read_graph(p),
                      Catch::Contains("bad.h5") && Catch::Contains(c.message));
  }
  // Targets stored as signed integers beyond uint32 are refused when read, not wrapped.
  {
    unfurl::io::H5Writer out(p);
    out.write("/graph/offsets", off, {4});
    out.write("/graph/targets", std::vector<std::int64_t>{1, -1, 2, 1}, {4});
    out.write("/graph/lengths", len, {4});
    out.set_int_attribute("/", "format_version", 1);
    out.close();
  }
  CHECK_THROWS_AS(unfurl::io::read_graph(p), unfurl::DataError);
  CHECK_THROWS_AS(unfurl::io::read_graph(dir / "absent.h5"), unfurl::MissingInputError);
}

TEST_CASE("graph writer refuses inconsistent arrays and keeps the old file", "[graph_file]") {
  unfurl::test::TempFolder dir;
  const auto g = ring_with_chords(10, 1);
  unfurl::io::write_graph(dir / "g.h5", g, nlohmann::json::object());
  const std::string before = unfurl::test::file_bytes(dir / "g.h5");
  auto broken = g;
  broken.lengths.pop_back();
  CHECK_THROWS_AS(unfurl::io::write_graph(dir / "g.h5", broken, {}), unfurl::InternalError);
  CHECK_THROWS_AS(unfurl::io::write_graph(dir / "g.h5", g, {}, {1, 2}), unfurl::InternalError);
  CHECK_THROWS_AS(unfurl::io::write_graph(dir / "nowhere" / "g.h5", g, {}), unfurl::OutputError);
  CHECK(unfurl::test::file_bytes(dir / "g.h5") == before);
  CHECK(dir.entries() == std::vector<std::string>{"g.h5"});
}
