#include "io/map_file.hpp"

#include <sys/wait.h>
#include <unistd.h>
#include <catch2/catch.hpp>

#include <cmath>
#include <limits>

#include "engine/error.hpp"
#include "engine/random.hpp"
#include "io/detail/hdf5_sandbox.hpp"
#include "io/graph_file.hpp"
#include "io/hdf5_file.hpp"
#include "tests/io/map_compare.hpp"
#include "tests/io/temp_folder.hpp"

namespace {

using unfurl::io::MapContents;
namespace fs = std::filesystem;

// Contents with every field filled from a seeded generator; values have no pattern a
// wrong index could reproduce by chance.
MapContents sample_map(std::size_t n, std::size_t m, std::size_t l, bool geodesic) {
  unfurl::Random rng(17);
  MapContents c;
  c.coords = unfurl::PointSet(n, m);
  for (auto& v : c.coords.values) v = static_cast<float>(rng.uniform() * 200.0 - 100.0);
  for (std::size_t i = 0; i < n; ++i) c.rows.push_back(static_cast<std::int64_t>(3 * i + 1));
  for (std::size_t j = 0; j < l; ++j) c.landmark_rows.push_back(c.rows[j * 2]);
  for (std::size_t k = 0; k < l * m; ++k) c.landmark_coords.push_back(rng.uniform() - 0.5);
  if (geodesic) {
    unfurl::DistanceRows g;
    g.rows = l;
    g.cols = n;
    for (std::size_t j = 0; j < l; ++j) g.sources.push_back(static_cast<unfurl::NodeId>(2 * j));
    for (std::size_t k = 0; k < l * n; ++k) g.values.push_back(static_cast<float>(rng.uniform()));
    c.landmark_geodesic = g;
  }
  for (std::size_t j = 0; j < l; ++j) c.spectrum.push_back(100.0 / (j + 1));
  c.spectrum_attributes = {
      {"which", "largest"}, {"count", l}, {"positive_mass", 412.5}, {"noise_axes", {3, 4}}};
  // Every group of the record, with ids that a float64 round trip would not keep (2^53 + 1).
  const std::int64_t huge = (std::int64_t{1} << 53) + 1;
  unfurl::io::MapGraphRecord graph;
  graph.degree = {{3, 6, 11}};
  graph.edge_length = {{0.125, 0.25, 0.5, 1.0, 2.5}};
  graph.component_sizes = {static_cast<std::int64_t>(n), 2, 1};
  graph.dropped_rows = {huge, 7};
  graph.bridges = {{4, huge, 0.75}, {2, 9, 1.5}};
  c.graph = graph;
  for (std::int64_t k : {5, 12}) {
    unfurl::io::MapScoreRecord s{.k = k,
                                 .trustworthiness = rng.uniform(),
                                 .continuity = rng.uniform(),
                                 .knn_preservation = rng.uniform(),
                                 .trustworthiness_95 = {rng.uniform(), rng.uniform()},
                                 .continuity_95 = {rng.uniform(), rng.uniform()},
                                 .knn_preservation_95 = {rng.uniform(), rng.uniform()},
                                 .method = k == 5 ? "exact" : "sampled",
                                 .sample_size = 4,
                                 .interval_method = "bootstrap percentile",
                                 .scored_rows = {},
                                 .trustworthiness_terms = {},
                                 .continuity_terms = {}};
    for (std::int64_t r :
         {std::int64_t{0}, std::int64_t{2}, std::int64_t{3}, std::int64_t(n) - 1}) {
      s.scored_rows.push_back(r);
      s.trustworthiness_terms.push_back(rng.uniform());
      s.continuity_terms.push_back(rng.uniform());
    }
    c.quality.by_k.push_back(s);
  }
  c.quality.residual = unfurl::io::MapResidualRecord{.by_dims = {0.5, 0.125},
                                                     .standard_error = {},
                                                     .pairs = 1770,
                                                     .sampled = false,
                                                     .drawn = "every pair"};
  c.quality.dimension = unfurl::io::MapDimensionRecord{.estimate = 1.75,
                                                       .k = 10,
                                                       .method = "Levina-Bickel",
                                                       .averaging = "inverse",
                                                       .points = "distinct",
                                                       .points_used = 60};
  c.quality.axis_share = unfurl::io::MapAxisShareRecord{.share = {0.75, 0.25},
                                                        .standard_error = {0.01, 0.02},
                                                        .basis = "whole spectrum",
                                                        .noise_axes = {2}};
  // Short-circuit suspects: one with a detour found, one without (inf), one that separates.
  const double inf = std::numeric_limits<double>::infinity();
  c.quality.short_circuits =
      unfurl::io::MapShortCircuitRecord{.worst = {{huge, 3, 1.5, 0.25, 0.375, 24.0, 24.0},
                                                  {8, 2, 1.25, 0.5, 0.5, inf, 9.5},
                                                  {0, 1, 2.0, 0.125, 0.25, inf, inf}},
                                        .suspects = 7,
                                        .long_edges = 40,
                                        .undecided = 1,
                                        .edges = 1234,
                                        .length_factor = 2.0,
                                        .detour_factor = 3.0};
  unfurl::PreprocessModel pre;
  pre.input_cols = 3;
  pre.scale = unfurl::Scale::robust;
  pre.metric = unfurl::Metric::cosine;
  pre.centre = {1.5, -2.0, 0.25};
  pre.spread = {2.0, 1.0, 0.5};
  pre.components = 2;
  pre.pca_mean = {0.1, 0.2, 0.3};
  pre.axes = {1, 0, 0, 0, 0.6, 0.8};
  pre.variances = {4.0, 1.0};
  pre.variance_kept = 0.875;
  c.preprocess = pre;
  c.input.centres = std::vector<double>{10.5, -3.25, 0.0};
  c.input.dropped_nonfinite_rows = {huge, 0};
  unfurl::Triangulation t;
  t.dims = m;
  t.landmarks = l;
  for (std::size_t k = 0; k < m * l; ++k) t.p.push_back(rng.uniform() - 0.5);
  for (std::size_t j = 0; j < l; ++j) t.mean_squared.push_back(rng.uniform() * 4.0);
  unfurl::io::MapPlacedRecord placed{
      .nearest_ratio = {}, .far_rows = {huge, 5}, .typical_distance = 0.375, .far_ratio = 8.0};
  for (std::size_t i = 0; i < n; ++i)
    placed.nearest_ratio.push_back(static_cast<float>(rng.uniform() * 12.0));
  c.placement = unfurl::io::MapPlacementRecord{.triangulation = t, .placed = placed};
  c.extras.push_back({"/notes/degree_histogram", {0, 3, 5, 1, 0, 2}, {3, 2}, {{"bins", 3}}});
  c.attributes = {{"seed", 12345},
                  {"input", {{"path", "/data/buoys.h5"}, {"dataset", "/points"}, {"bytes", 999}}},
                  {"parameters", {{"k", 10}, {"dims", 2}, {"pick", "maxmin"}, {"radius", 0.5}}},
                  {"stage_times", {{"graph", 1.25}, {"geodesic", 3.5}}},
                  {"creation_time", "2026-12-01T17:00:00Z"}};
  return c;
}

void check_same(const MapContents& a, const MapContents& b, bool geodesic) {
  CHECK(a.coords.rows == b.coords.rows);
  CHECK(a.coords.cols == b.coords.cols);
  CHECK(a.coords.values == b.coords.values);
  CHECK(a.rows == b.rows);
  CHECK(a.landmark_rows == b.landmark_rows);
  CHECK(a.landmark_coords == b.landmark_coords);
  CHECK(a.spectrum == b.spectrum);
  CHECK(a.spectrum_attributes == b.spectrum_attributes);
  REQUIRE(b.landmark_geodesic.has_value() == geodesic);
  if (geodesic) {
    CHECK(a.landmark_geodesic->rows == b.landmark_geodesic->rows);
    CHECK(a.landmark_geodesic->cols == b.landmark_geodesic->cols);
    CHECK(a.landmark_geodesic->sources == b.landmark_geodesic->sources);
    CHECK(a.landmark_geodesic->values == b.landmark_geodesic->values);
  }
  unfurl::test::check_same_groups(a, b);
  REQUIRE(b.extras.size() == a.extras.size());
  for (std::size_t i = 0; i < a.extras.size(); ++i) {
    CHECK(b.extras[i].path == a.extras[i].path);
    CHECK(b.extras[i].values == a.extras[i].values);
    CHECK(b.extras[i].dims == a.extras[i].dims);
    CHECK(b.extras[i].attributes == a.extras[i].attributes);
  }
  for (const auto& [key, value] : a.attributes.items()) CHECK(b.attributes.at(key) == value);
}

}  // namespace

TEST_CASE("map file round trips every field", "[map_file]") {
  unfurl::test::TempFolder dir;
  for (bool geodesic : {true, false}) {
    const auto path = dir / (geodesic ? "with.h5" : "without.h5");
    const MapContents written = sample_map(60, 3, 7, geodesic);
    unfurl::io::write_map(path, written);
    const MapContents read = unfurl::io::read_map(path, true);
    check_same(written, read, geodesic);
    CHECK(read.attributes.at("format_version") == unfurl::io::map_format_version);
    CHECK(unfurl::io::map_format_version == 2);
    CHECK(read.attributes.at("program_version") == UNFURL_VERSION);
    CHECK(read.attributes.at("creation_time") == "2026-12-01T17:00:00Z");  // caller's wins
    CHECK(read.attributes.at("peak_memory_bytes").get<std::int64_t>() > 0);
    CHECK_FALSE(read.attributes.at("host").get<std::string>().empty());
    // The geodesic rows are only read on request.
    CHECK_FALSE(unfurl::io::read_map(path).landmark_geodesic.has_value());
  }
  // Parameters are also plain attributes, one each, for readers that know no JSON.
  unfurl::io::H5Reader in(dir / "with.h5");
  CHECK(in.int_attribute("/", "parameters.k") == 10);
  CHECK(in.string_attribute("/", "parameters.pick") == "maxmin");
  CHECK(in.double_attribute("/", "parameters.radius") == 0.5);
  CHECK(nlohmann::json::parse(in.string_attribute("/", "parameters")).at("dims") == 2);
}

TEST_CASE("map file of a large map is chunked and still exact", "[map_file]") {
  unfurl::test::TempFolder dir;
  MapContents big = sample_map(400000, 3, 4, true);  // /coords 4.8 MB: above the threshold
  unfurl::io::write_map(dir / "big.h5", big, {1});
  const MapContents read = unfurl::io::read_map(dir / "big.h5", true);
  CHECK(read.coords.values == big.coords.values);
  CHECK(read.landmark_geodesic->values == big.landmark_geodesic->values);
}

TEST_CASE("map file of an empty map round trips", "[map_file]") {
  unfurl::test::TempFolder dir;
  MapContents c;
  c.coords = unfurl::PointSet(0, 2);
  unfurl::io::write_map(dir / "empty.h5", c);
  const MapContents read = unfurl::io::read_map(dir / "empty.h5");
  CHECK(read.coords.rows == 0);
  CHECK(read.coords.cols == 2);
  CHECK(read.rows.empty());
}

TEST_CASE("a failed map write leaves the earlier map byte-identical", "[map_file]") {
  unfurl::test::TempFolder dir;
  const auto path = dir / "map.h5";
  unfurl::io::write_map(path, sample_map(30, 2, 4, false));
  const std::string before = unfurl::test::file_bytes(path);
  REQUIRE(before.size() > 0);

  CHECK_THROWS_AS(
      unfurl::io::write_map(dir / "missing-folder" / "map.h5", sample_map(5, 2, 1, false)),
      unfurl::OutputError);
  CHECK_THROWS_AS(unfurl::io::write_map(dir.path(), sample_map(5, 2, 1, false)),
                  unfurl::OutputError);
  // Part way: the layout datasets are written, then an extra collides with /coords.
  MapContents clash = sample_map(10, 2, 3, true);
  clash.extras.push_back({"/coords", {1.0}, {1}, {}});
  CHECK_THROWS_AS(unfurl::io::write_map(path, clash), unfurl::IoError);
  // Part way: an extra whose values do not fill its dims (a caller's bug).
  MapContents ragged = sample_map(10, 2, 3, true);
  ragged.extras.push_back({"/notes/bad", {1.0, 2.0, 3.0}, {2, 2}, {}});
  CHECK_THROWS_AS(unfurl::io::write_map(path, ragged), unfurl::InternalError);
  // Before writing: sizes that disagree.
  MapContents short_rows = sample_map(10, 2, 3, false);
  short_rows.rows.pop_back();
  CHECK_THROWS_AS(unfurl::io::write_map(path, short_rows), unfurl::InternalError);
  MapContents short_terms = sample_map(10, 2, 3, false);
  short_terms.quality.by_k[0].continuity_terms.pop_back();
  CHECK_THROWS_AS(unfurl::io::write_map(path, short_terms), unfurl::InternalError);
  MapContents outside = sample_map(10, 2, 3, false);
  outside.quality.by_k[1].scored_rows[0] = 10;  // N = 10: not a map row
  CHECK_THROWS_AS(unfurl::io::write_map(path, outside), unfurl::InternalError);
  MapContents thin_axes = sample_map(10, 2, 3, false);
  thin_axes.preprocess->axes.pop_back();
  CHECK_THROWS_AS(unfurl::io::write_map(path, thin_axes), unfurl::InternalError);
  MapContents thin_triangulation = sample_map(10, 2, 3, false);
  thin_triangulation.placement->triangulation->p.pop_back();
  CHECK_THROWS_AS(unfurl::io::write_map(path, thin_triangulation), unfurl::InternalError);
  MapContents short_ratio = sample_map(10, 2, 3, false);
  short_ratio.placement->placed->nearest_ratio.pop_back();
  CHECK_THROWS_AS(unfurl::io::write_map(path, short_ratio), unfurl::InternalError);

  CHECK(unfurl::test::file_bytes(path) == before);
  CHECK(dir.entries() == std::vector<std::string>{"map.h5"});  // no temporary file left
}

TEST_CASE("map reader rejects damaged and foreign files", "[map_file]") {
  unfurl::test::TempFolder dir;
  const auto good = dir / "good.h5";
  unfurl::io::write_map(good, sample_map(200, 2, 5, true));
  const std::string bytes = unfurl::test::file_bytes(good);

  SECTION("truncated at many points") {
    for (std::size_t cut : {std::size_t{0}, std::size_t{7}, std::size_t{100}, bytes.size() / 3,
                            bytes.size() / 2, bytes.size() - 100, bytes.size() - 1}) {
      unfurl::test::write_bytes(dir / "cut.h5", bytes.substr(0, cut));
      CAPTURE(cut);
      CHECK_THROWS_AS(unfurl::io::read_map(dir / "cut.h5", true), unfurl::IoError);
    }
  }
  SECTION("random bytes") {
    unfurl::Random rng(5);
    std::string noise(4096, '\0');
    for (auto& ch : noise) ch = static_cast<char>(rng.uniform() * 256);
    unfurl::test::write_bytes(dir / "noise.h5", noise);
    CHECK_THROWS_AS(unfurl::io::read_map(dir / "noise.h5"), unfurl::IoError);
  }
  SECTION("missing file") {
    CHECK_THROWS_AS(unfurl::io::read_map(dir / "absent.h5"), unfurl::MissingInputError);
  }
  SECTION("newer format version") {
    unfurl::io::H5Writer out(dir / "newer.h5");
    out.write("/coords", std::vector<float>{1, 2}, {1, 2});
    out.write("/rows", std::vector<std::int64_t>{0}, {1});
    out.set_int_attribute("/", "format_version", 7);
    out.close();
    CHECK_THROWS_AS(unfurl::io::read_map(dir / "newer.h5"), unfurl::DataError);
    CHECK_THROWS_WITH(unfurl::io::read_map(dir / "newer.h5"),
                      Catch::Contains("newer.h5: written by a newer unfurl: format version 7, "
                                      "this reads up to 2"));
  }
  SECTION("short-circuit rows without their figures") {
    unfurl::io::H5Writer out(dir / "suspects.h5");
    out.write("/coords", std::vector<float>{1, 2}, {1, 2});
    out.write("/rows", std::vector<std::int64_t>{0}, {1});
    out.write("/quality/short_circuit_rows", std::vector<std::int64_t>{0, 5}, {1, 2});
    out.set_int_attribute("/", "format_version", 2);
    out.close();
    CHECK_THROWS_AS(unfurl::io::read_map(dir / "suspects.h5"), unfurl::DataError);
    CHECK_THROWS_WITH(unfurl::io::read_map(dir / "suspects.h5"),
                      Catch::Contains("/quality/short_circuit_figures: missing"));
  }
  SECTION("missing /coords, or sizes that disagree") {
    {
      unfurl::io::H5Writer out(dir / "nocoords.h5");
      out.write("/rows", std::vector<std::int64_t>{0}, {1});
      out.set_int_attribute("/", "format_version", 1);
      out.close();
    }
    CHECK_THROWS_AS(unfurl::io::read_map(dir / "nocoords.h5"), unfurl::MissingInputError);
    CHECK_THROWS_WITH(unfurl::io::read_map(dir / "nocoords.h5"), Catch::Contains("/coords"));
    {
      unfurl::io::H5Writer out(dir / "shortrows.h5");
      out.write("/coords", std::vector<float>{1, 2, 3, 4}, {2, 2});
      out.write("/rows", std::vector<std::int64_t>{0}, {1});
      out.set_int_attribute("/", "format_version", 1);
      out.close();
    }
    CHECK_THROWS_AS(unfurl::io::read_map(dir / "shortrows.h5"), unfurl::DataError);
    CHECK_THROWS_WITH(unfurl::io::read_map(dir / "shortrows.h5"), Catch::Contains("/rows"));
    {
      unfurl::io::H5Writer out(dir / "flat.h5");
      out.write("/coords", std::vector<float>{1, 2, 3, 4}, {4});
      out.set_int_attribute("/", "format_version", 1);
      out.close();
    }
    CHECK_THROWS_AS(unfurl::io::read_map(dir / "flat.h5"), unfurl::DataError);
  }
  SECTION("a placement record that disagrees with the map") {
    {
      unfurl::io::H5Writer out(dir / "placement.h5");
      out.write("/coords", std::vector<float>{1, 2, 3, 4}, {2, 2});
      out.write("/rows", std::vector<std::int64_t>{0, 1}, {2});
      out.write("/landmarks/rows", std::vector<std::int64_t>{0}, {1});
      out.write("/landmarks/coords", std::vector<double>{1, 2}, {1, 2});
      out.write("/placement/triangulation", std::vector<double>{1, 2, 3}, {1, 3});
      out.write("/placement/landmark_mean_squared", std::vector<double>{1}, {1});
      out.set_int_attribute("/", "format_version", 2);
      out.close();
    }
    CHECK_THROWS_AS(unfurl::io::read_map(dir / "placement.h5"), unfurl::DataError);
    CHECK_THROWS_WITH(
        unfurl::io::read_map(dir / "placement.h5"),
        Catch::Contains("/placement/triangulation: is 1 x 3, expected m x L = 2 x 1"));
    {
      unfurl::io::H5Writer out(dir / "placed.h5");
      out.write("/coords", std::vector<float>{1, 2, 3, 4}, {2, 2});
      out.write("/rows", std::vector<std::int64_t>{0, 1}, {2});
      out.write("/placement/nearest_ratio", std::vector<float>{0.5f, 1.5f}, {2});
      out.set_double_attribute("/placement/nearest_ratio", "typical_distance", 0.25);
      out.set_double_attribute("/placement/nearest_ratio", "far_ratio", 8);
      out.set_int_attribute("/", "format_version", 2);
      out.close();
    }
    CHECK_THROWS_WITH(unfurl::io::read_map(dir / "placed.h5"),
                      Catch::Contains("/placement/far_rows: missing"));
  }
  SECTION("not a map at all") {
    unfurl::io::H5Writer out(dir / "other.h5");
    out.write("/points", std::vector<float>{1, 2}, {1, 2});
    out.close();
    CHECK_THROWS_WITH(unfurl::io::read_map(dir / "other.h5"), Catch::Contains("no format_version"));
  }
}

TEST_CASE("input identity names the file, its size and time", "[map_file]") {
  unfurl::test::TempFolder dir;
  unfurl::test::write_bytes(dir / "in.csv", "1,2\n3,4\n");
  const auto id = unfurl::io::input_identity(dir / "in.csv", "");
  CHECK(id.at("bytes") == 8);
  CHECK(id.at("path").get<std::string>().find("in.csv") != std::string::npos);
  CHECK(id.at("modified").get<std::string>().size() == 20);
  CHECK_THROWS_AS(unfurl::io::input_identity(dir / "absent", ""), unfurl::MissingInputError);
}

TEST_CASE("map reader survives flipped bytes without crashing", "[map_file]") {
  // Corruption anywhere must end in success or one of our exceptions: never a crash, never
  // a foreign exception type. Each read runs in a child process of its own because HDF5 1.10
  // leaks memory on the error paths of damaged files, which would fail a leak-checking build
  // for a fault that is not ours; the child reports by its exit code.
  unfurl::test::TempFolder dir;
  unfurl::io::detail::set_hdf5_check_timeout(2.0);  // some damage sends HDF5 into a loop
  unfurl::io::write_map(dir / "good.h5", sample_map(50, 2, 3, true));
  const std::string bytes = unfurl::test::file_bytes(dir / "good.h5");
  unfurl::Random rng(99);
  int refused = 0, accepted = 0;
  for (int trial = 0; trial < 200; ++trial) {
    std::string damaged = bytes;
    for (int k = 0; k < 4; ++k) {
      const auto at = static_cast<std::size_t>(rng.uniform() * static_cast<double>(bytes.size()));
      damaged[at] = static_cast<char>(damaged[at] ^ (1 + static_cast<int>(rng.uniform() * 255)));
    }
    unfurl::test::write_bytes(dir / "bad.h5", damaged);
    const pid_t child = ::fork();
    REQUIRE(child >= 0);
    if (child == 0) {
      int code = 0;
      try {
        (void)unfurl::io::read_map(dir / "bad.h5", true);
      } catch (const unfurl::Error&) {
        code = 3;
      } catch (...) {
        code = 4;
      }
      ::_exit(code);
    }
    int status = 0;
    REQUIRE(::waitpid(child, &status, 0) == child);
    CAPTURE(trial);
    REQUIRE(WIFEXITED(status));
    REQUIRE((WEXITSTATUS(status) == 0 || WEXITSTATUS(status) == 3));
    (WEXITSTATUS(status) == 3 ? refused : accepted)++;
  }
  unfurl::io::detail::set_hdf5_check_timeout(30.0);
  CHECK(refused > 0);  // some flips must have been noticed
}

TEST_CASE("a graph saved inside a map is not read as extras", "[map_file]") {
  unfurl::test::TempFolder dir;
  {
    // Add the CSR arrays of a two-node graph next to the map's own datasets.
    unfurl::io::H5Writer out(dir / "m2.h5");
    const MapContents c = sample_map(10, 2, 2, false);
    out.write("/coords", c.coords.values, {10, 2});
    out.write("/rows", c.rows, {10});
    out.write("/graph/offsets", std::vector<std::int64_t>{0, 1, 2}, {3});
    out.write("/graph/targets", std::vector<std::uint32_t>{1, 0}, {2});
    out.write("/graph/lengths", std::vector<float>{0.5f, 0.5f}, {2});
    out.write("/graph/nodes/component", std::vector<double>{0, 0}, {2});
    out.write("/graph/edges_kept", std::vector<double>{2}, {});
    out.set_int_attribute("/", "format_version", 1);
    out.close();
  }
  const MapContents read = unfurl::io::read_map(dir / "m2.h5");
  REQUIRE(read.extras.size() == 1);
  CHECK(read.extras[0].path == "/graph/edges_kept");
  const auto graph = unfurl::io::read_graph(dir / "m2.h5");  // while read_graph finds it
  CHECK(graph.graph.nodes() == 2);
  CHECK(graph.node_arrays.size() == 1);
}
