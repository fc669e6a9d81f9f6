// Version-1 maps read by the version-2 reader. The fixtures in tests/data are real version-1
// files written by the release binary at main c42f544 (tests/data/make_v1_maps.sh says how);
// the expected values below follow from how their input was built, not from our reader.
#include <catch2/catch.hpp>

#include <algorithm>
#include <cmath>
#include <fstream>
#include <numeric>

#include "engine/error.hpp"
#include "io/hdf5_file.hpp"
#include "io/map_file.hpp"
#include "tests/io/map_compare.hpp"
#include "tests/io/temp_folder.hpp"

namespace {

namespace fs = std::filesystem;
using unfurl::io::MapContents;

fs::path fixture(const char* name) {
  return fs::path(UNFURL_SOURCE_DIR) / "tests" / "data" / name;
}

std::vector<std::int64_t> range(std::int64_t from, std::int64_t to) {
  std::vector<std::int64_t> v(static_cast<std::size_t>(to - from));
  std::iota(v.begin(), v.end(), from);
  return v;
}

// Writes `c` as version 2 and reads it back: the same record, now version 2.
void check_round_trip(const MapContents& c) {
  unfurl::test::TempFolder dir;
  unfurl::io::write_map(dir / "v2.h5", c);
  const MapContents back = unfurl::io::read_map(dir / "v2.h5", true);
  CHECK(back.attributes.at("format_version") == 2);
  CHECK(back.coords.values == c.coords.values);
  CHECK(back.rows == c.rows);
  CHECK(back.landmark_rows == c.landmark_rows);
  CHECK(back.landmark_coords == c.landmark_coords);
  REQUIRE(back.landmark_geodesic.has_value() == c.landmark_geodesic.has_value());
  if (c.landmark_geodesic) {
    CHECK(back.landmark_geodesic->values == c.landmark_geodesic->values);
    CHECK(back.landmark_geodesic->sources == c.landmark_geodesic->sources);
  }
  CHECK(back.spectrum == c.spectrum);
  CHECK(back.spectrum_attributes == c.spectrum_attributes);
  unfurl::test::check_same_groups(c, back);
  CHECK(back.extras.empty());
  // Every attribute but the stamp of the new file comes back.
  for (const auto& [key, value] : c.attributes.items())
    if (key != "format_version" && key != "program_version")
      CHECK(back.attributes.at(key) == value);
}

}  // namespace

TEST_CASE("a version-1 map with a dropped component reads in full", "[map_file][v1]") {
  const MapContents c = unfurl::io::read_map(fixture("v1-dropped.h5"), true);
  CHECK(c.attributes.at("format_version") == 1);
  // 60 input rows: the arc 0-44 is the map, the far cluster 45-58 was dropped, row 59 was NaN.
  CHECK(c.coords.rows == 45);
  CHECK(c.coords.cols == 2);
  CHECK(c.rows == range(0, 45));
  REQUIRE(c.graph.has_value());
  CHECK(c.graph->component_sizes == std::vector<std::int64_t>{45, 14});
  CHECK(c.graph->dropped_rows == range(45, 59));
  CHECK(c.graph->bridges.empty());
  REQUIRE(c.graph->degree.has_value());
  CHECK((*c.graph->degree)[0] == 6);  // --k 6: every node has at least 6 neighbours
  CHECK((*c.graph->degree)[0] <= (*c.graph->degree)[1]);
  CHECK((*c.graph->degree)[1] <= (*c.graph->degree)[2]);
  REQUIRE(c.graph->edge_length.has_value());
  CHECK(std::is_sorted(c.graph->edge_length->begin(), c.graph->edge_length->end()));
  CHECK(c.input.dropped_nonfinite_rows == std::vector<std::int64_t>{59});
  REQUIRE(c.input.centres.has_value());
  CHECK(c.input.centres->size() == 3);
  // --scale standard --pre-pca 2 on 3 columns.
  REQUIRE(c.preprocess.has_value());
  CHECK(c.preprocess->scale == unfurl::Scale::standard);
  CHECK(c.preprocess->metric == unfurl::Metric::euclidean);
  CHECK(c.preprocess->input_cols == 3);
  CHECK(c.preprocess->components == 2);
  CHECK(c.preprocess->axes.size() == 6);
  CHECK(c.preprocess->variances.size() == 2);
  CHECK(c.preprocess->variance_kept > 0.9);
  // --landmarks 8 --keep-geodesics: L x N rows, each starting at its landmark (distance 0).
  CHECK(c.landmark_rows.size() == 8);
  CHECK(c.landmark_coords.size() == 16);
  REQUIRE(c.landmark_geodesic.has_value());
  CHECK(c.landmark_geodesic->rows == 8);
  CHECK(c.landmark_geodesic->cols == 45);
  for (std::size_t j = 0; j < 8; ++j) {
    const auto node = c.landmark_geodesic->sources[j];
    CHECK(c.landmark_geodesic->values[j * 45 + node] == 0.0f);
    CHECK(c.rows[node] == c.landmark_rows[j]);
  }
  CHECK(c.spectrum.size() == 8);
  CHECK(c.spectrum_attributes.at("which") == "all");
  // --score-k 5, exact scoring of all 45 map rows.
  REQUIRE(c.quality.by_k.size() == 1);
  const auto& s = c.quality.by_k[0];
  CHECK(s.k == 5);
  CHECK(s.method == "exact");
  CHECK(s.sample_size == 45);
  CHECK(s.scored_rows == range(0, 45));
  CHECK(s.trustworthiness_terms.size() == 45);
  CHECK(s.continuity_terms.size() == 45);
  CHECK(s.trustworthiness_95[0] == s.trustworthiness);  // exact: the interval is the value
  CHECK(s.trustworthiness > 0.9);
  REQUIRE(c.quality.residual.has_value());
  CHECK(c.quality.residual->by_dims.size() == 2);
  CHECK(c.quality.residual->pairs == 45 * 44);  // ordered pairs, as the release counts them
  CHECK_FALSE(c.quality.residual->sampled);
  REQUIRE(c.quality.dimension.has_value());
  CHECK(c.quality.dimension->k == 6);
  CHECK(c.quality.dimension->points == "distinct");
  REQUIRE(c.quality.axis_share.has_value());
  CHECK(c.quality.axis_share->share.size() == 2);
  CHECK(c.extras.empty());  // every version-1 dataset has its field
  CHECK(c.attributes.at("parameters").at("disconnected") == "largest");
  check_round_trip(c);
}

TEST_CASE("a version-1 map with a bridge reads its B x 3 float64 bridges", "[map_file][v1]") {
  const MapContents c = unfurl::io::read_map(fixture("v1-bridged.h5"));
  CHECK(c.attributes.at("format_version") == 1);
  CHECK(c.rows == range(0, 60));
  REQUIRE(c.graph.has_value());
  CHECK(c.graph->component_sizes == std::vector<std::int64_t>{45, 15});
  CHECK(c.graph->dropped_rows.empty());
  // One edge joins the arc (rows 0-44) and its shifted copy (rows 45-59), 9 units apart or less.
  REQUIRE(c.graph->bridges.size() == 1);
  const auto& b = c.graph->bridges[0];
  CHECK(std::min(b.from_row, b.to_row) < 45);
  CHECK(std::max(b.from_row, b.to_row) >= 45);
  CHECK(b.length > 0);
  CHECK(b.length <= 9.5);
  CHECK(c.input.dropped_nonfinite_rows.empty());
  CHECK_FALSE(c.preprocess.has_value());
  CHECK_FALSE(c.landmark_geodesic.has_value());
  check_round_trip(c);
}

TEST_CASE("row ids that are not whole numbers >= 0 are refused", "[map_file][v1]") {
  unfurl::test::TempFolder dir;
  auto write = [&](const char* name, std::int64_t version, auto ids, const std::string& where) {
    unfurl::io::H5Writer out(dir / name);
    out.write("/coords", std::vector<float>{0, 1, 2, 3}, {2, 2});
    out.write("/rows", std::vector<std::int64_t>{0, 1}, {2});
    out.write("/graph/component_sizes", std::vector<std::int64_t>{2}, {1});
    out.write(where, ids, {ids.size()});
    out.set_int_attribute("/", "format_version", version);
    out.close();
    return dir / name;
  };
  // Version 1: float64 ids, converted when whole and >= 0.
  const auto fine = write("fine.h5", 1, std::vector<double>{3, 8}, "/graph/dropped_rows");
  CHECK(unfurl::io::read_map(fine).graph->dropped_rows == std::vector<std::int64_t>{3, 8});
  for (double bad : {2.5, -1.0, std::nan("")}) {
    const auto path = write("bad.h5", 1, std::vector<double>{4, bad}, "/graph/dropped_rows");
    CHECK_THROWS_AS(unfurl::io::read_map(path), unfurl::DataError);
    CHECK_THROWS_WITH(unfurl::io::read_map(path),
                      Catch::Contains("/graph/dropped_rows") && Catch::Contains("entry 1"));
  }
  const auto nonfinite =
      write("nf.h5", 1, std::vector<double>{0.5}, "/input/dropped_nonfinite_rows");
  CHECK_THROWS_WITH(unfurl::io::read_map(nonfinite),
                    Catch::Contains("/input/dropped_nonfinite_rows"));
  // Version 2: ids are int64; float64 storage or a negative id is refused.
  const auto floats = write("v2f.h5", 2, std::vector<double>{3, 8}, "/graph/dropped_rows");
  CHECK_THROWS_AS(unfurl::io::read_map(floats), unfurl::DataError);
  const auto negative = write("v2n.h5", 2, std::vector<std::int64_t>{-4}, "/graph/dropped_rows");
  CHECK_THROWS_WITH(unfurl::io::read_map(negative), Catch::Contains("/graph/dropped_rows"));
}

TEST_CASE("is_map_file tells maps from point files", "[map_file]") {
  unfurl::test::TempFolder dir;
  CHECK(unfurl::io::is_map_file(fixture("v1-dropped.h5")));
  {
    unfurl::io::H5Writer out(dir / "points.h5");
    out.write("/points", std::vector<float>{0, 1, 2, 3}, {2, 2});
    out.close();
  }
  CHECK_FALSE(unfurl::io::is_map_file(dir / "points.h5"));
  std::ofstream(dir / "points.csv") << "1,2\n3,4\n";
  CHECK_FALSE(unfurl::io::is_map_file(dir / "points.csv"));
}
