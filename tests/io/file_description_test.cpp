// Tests for io/file_description: descriptions of files written here (HDF5 through the C API,
// NPY bytes per numpy.lib.format / NEP 1, CSV text), so what was written is the oracle.
#include <catch2/catch.hpp>

#include "engine/error.hpp"
#include "io/file_description.hpp"
#include "tests/io/point_fixtures.hpp"

using namespace unfurl;
using namespace unfurl::io;
using namespace unfurl::test;

TEST_CASE("describe_file lists HDF5 datasets with storage, filters and attributes",
          "[io][describe]") {
  TempDir dir;
  const auto file = dir / "d.h5";
  std::vector<double> values(40 * 3, 1.5);
  std::vector<std::int32_t> labels(40, 2);
  write_hdf5(file, "/set/points", {40, 3}, H5T_IEEE_F64LE, H5T_NATIVE_DOUBLE, values.data(),
             {true, 8, 4});
  write_hdf5(file, "/labels", {40}, H5T_STD_I32LE, H5T_NATIVE_INT32, labels.data());
  write_hdf5_attribute(file, "/", "origin", "buoy survey");
  write_hdf5_attribute(file, "/set/points", "units", "metres");
  const FileDescription d = describe_file(file);
  CHECK(d.format == "hdf5");
  REQUIRE(d.root_attributes.size() == 1);
  CHECK(d.root_attributes[0].name == "origin");
  CHECK(d.root_attributes[0].value == "buoy survey");
  REQUIRE(d.arrays.size() == 2);
  const ArrayDescription& labels_d = d.arrays[0];  // name order
  const ArrayDescription& points_d = d.arrays[1];
  CHECK(labels_d.path == "/labels");
  CHECK(labels_d.shape == std::vector<std::uint64_t>{40});
  CHECK(labels_d.type == "int32");
  CHECK(labels_d.storage == "contiguous");
  CHECK_FALSE(labels_d.points_candidate);
  CHECK(points_d.path == "/set/points");
  CHECK(points_d.shape == std::vector<std::uint64_t>{40, 3});
  CHECK(points_d.type == "float64");
  CHECK(points_d.storage == "chunked");
  CHECK(points_d.chunk == std::vector<std::uint64_t>{8, 3});
  CHECK(points_d.filters == std::vector<std::string>{"shuffle", "deflate"});
  REQUIRE(points_d.attributes.size() == 1);
  CHECK(points_d.attributes[0].value == "metres");
  CHECK(points_d.points_candidate);
}

TEST_CASE("describe_file gives the shape and type of NPY and CSV files", "[io][describe]") {
  TempDir dir;
  write_npy(dir / "a.npy", ">i2", {5, 2}, true, std::string(20, '\0'), 2);
  const FileDescription n = describe_file(dir / "a.npy");
  CHECK(n.format == "npy");
  REQUIRE(n.arrays.size() == 1);
  CHECK(n.arrays[0].shape == std::vector<std::uint64_t>{5, 2});
  CHECK(n.arrays[0].type == "int16");
  CHECK(n.arrays[0].storage == "Fortran order");
  CHECK(n.detail == "NPY format 2.0, dtype '>i2'");

  write_bytes(dir / "b.csv", "# comment\nx;y;z\n1;2;3\n\n4;5;6\n");
  const FileDescription c = describe_file(dir / "b.csv");
  CHECK(c.format == "csv");
  CHECK(c.arrays[0].shape == std::vector<std::uint64_t>{2, 3});
  CHECK(c.column_names == std::vector<std::string>{"x", "y", "z"});
  CHECK(c.detail == "fields separated by ';', header line");
  CHECK_THROWS_AS(describe_file(dir / "none.csv"), MissingInputError);
}

TEST_CASE("column_stats gives per-column min, max and mean", "[io][describe]") {
  PointSet p(4, 2);
  const float v[8] = {1, -2, 3, 5, -7, 0.5f, 11, 2};
  std::copy(v, v + 8, p.values.begin());
  const auto s = column_stats(p);
  REQUIRE(s.size() == 2);
  // Hand-computed: column 0 = {1, 3, -7, 11}, column 1 = {-2, 5, 0.5, 2}.
  CHECK(s[0].min == -7.0);
  CHECK(s[0].max == 11.0);
  CHECK(s[0].mean == Approx(2.0).epsilon(1e-15));
  CHECK(s[1].min == -2.0);
  CHECK(s[1].max == 5.0);
  CHECK(s[1].mean == Approx(1.375).epsilon(1e-15));
}
