// Tests for io/points_reader: every fixture is written here (HDF5 through the C API, NPY and
// CSV as raw bytes), so the values written are the oracle the values read are compared with,
// one by one. NPY bytes follow the published format: numpy.lib.format, NEP 1 ("A Simple File
// Format for NumPy Arrays"), versions 1.0, 2.0 and 3.0.
#include <hdf5.h>

#include <algorithm>
#include <atomic>
#include <bit>
#include <catch2/catch.hpp>
#include <cmath>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <limits>
#include <random>
#include <string>
#include <vector>

#include "engine/error.hpp"
#include "io/file_description.hpp"
#include "io/points_reader.hpp"
#include "tests/io/point_fixtures.hpp"

using namespace unfurl;
using namespace unfurl::io;
using namespace unfurl::test;
using Catch::Matchers::Contains;

namespace {

// Integers that fit every tested type (int8 included) and a fraction exact in float32.
double value_at(std::size_t i, std::size_t j, bool is_float, bool is_unsigned) {
  const double base = static_cast<double>((i * 7 + j * 3) % 100);
  if (is_float) return (base - 50.0) * 0.25;
  return is_unsigned ? base + 20.0 : base - 50.0;
}

// The readers subtract a centre per column in double before narrowing to float32: the value
// as read is the point plus its column's centre, within float32 rounding of values of this
// size (at most 150 here; the values written differ by at least 0.25).
bool as_read(const PointReadResult& r, std::size_t i, std::size_t j, double want) {
  const double back = static_cast<double>(r.points.row(i)[j]) + r.centres.at(j);
  return std::fabs(back - want) <= 1e-6 * (1.0 + std::fabs(want) + std::fabs(r.centres[j]));
}

void check_values(const PointReadResult& r, std::size_t first_row, std::size_t rows,
                  std::size_t cols, bool is_float, bool is_unsigned) {
  REQUIRE(r.points.rows == rows);
  REQUIRE(r.points.cols == cols);
  REQUIRE(r.points.values.size() == rows * cols);
  REQUIRE(r.rows.size() == rows);
  REQUIRE(r.centres.size() == cols);
  REQUIRE(r.points.row_keys.size() == rows);
  std::size_t mismatches = 0;
  std::vector<double> mean(cols, 0.0);
  for (std::size_t i = 0; i < rows; ++i) {
    if (r.rows[i] != static_cast<std::int64_t>(first_row + i)) ++mismatches;
    for (std::size_t j = 0; j < cols; ++j) {
      const double want = value_at(first_row + i, j, is_float, is_unsigned);
      mean[j] += want / static_cast<double>(rows);
      if (!as_read(r, i, j, want)) ++mismatches;
    }
  }
  CHECK(mismatches == 0);
  // The centres are the column means of the rows read.
  for (std::size_t j = 0; j < cols; ++j) CHECK(r.centres[j] == Approx(mean[j]).margin(1e-9));
}

template <class T>
std::vector<T> table(std::size_t rows, std::size_t cols) {
  std::vector<T> v(rows * cols);
  for (std::size_t i = 0; i < rows; ++i)
    for (std::size_t j = 0; j < cols; ++j)
      v[i * cols + j] =
          static_cast<T>(value_at(i, j, std::is_floating_point_v<T>, std::is_unsigned_v<T>));
  return v;
}

template <class T>
void hdf5_round_trip(hid_t file_type, const std::string& type_name) {
  TempDir dir;
  const std::size_t rows = 57, cols = 5;
  const auto values = table<T>(rows, cols);
  const hid_t mem_type = native_type<T>();
  Hdf5Layout contiguous, chunked{true, 8, 0}, compressed{true, 16, 6};
  write_hdf5(dir / "c.h5", "/x", {rows, cols}, file_type, mem_type, values.data(), contiguous);
  write_hdf5(dir / "k.h5", "/grp/x", {rows, cols}, file_type, mem_type, values.data(), chunked);
  write_hdf5(dir / "z.h5", "/x", {rows, cols}, file_type, mem_type, values.data(), compressed);
  for (const char* name : {"c.h5", "k.h5", "z.h5"}) {
    INFO(type_name << " " << name);
    const auto r = read_points(dir / name);
    CHECK(r.format == "hdf5");
    CHECK(r.source_type == type_name);
    CHECK(r.file_rows == rows);
    check_values(r, 0, rows, cols, std::is_floating_point_v<T>, std::is_unsigned_v<T>);
    PointReadOptions part;
    part.rows = RowRange{10, 37};  // crosses chunk boundaries (8 and 16 rows)
    check_values(read_points(dir / name, part), 10, 27, cols, std::is_floating_point_v<T>,
                 std::is_unsigned_v<T>);
  }
}

}  // namespace

TEST_CASE("parse_row_range reads A:B, A: and :B and names the rows field on errors",
          "[io][points]") {
  const RowRange a = parse_row_range("3:9");
  CHECK(a.begin == 3);
  CHECK(a.end == std::optional<std::size_t>(9));
  CHECK(parse_row_range("4:").begin == 4);
  CHECK_FALSE(parse_row_range("4:").end.has_value());
  CHECK(parse_row_range(":7").begin == 0);
  CHECK(parse_row_range(":7").end == std::optional<std::size_t>(7));
  for (const char* bad : {"9:3", "3:3", "a:b", "5", "1:2:3", "-1:4", "2:x"}) {
    INFO(bad);
    CHECK_THROWS_KIND(parse_row_range(bad), OptionError,
                      Catch::Matchers::StartsWith("PointReadOptions.rows: "));
  }
}

TEST_CASE("HDF5 round trip of every numeric type, contiguous, chunked and gzip", "[io][points]") {
  REQUIRE(H5Zfilter_avail(H5Z_FILTER_DEFLATE) > 0);
  hdf5_round_trip<float>(H5T_IEEE_F32LE, "float32");
  hdf5_round_trip<double>(H5T_IEEE_F64LE, "float64");
  hdf5_round_trip<double>(H5T_IEEE_F64BE, "float64");
  hdf5_round_trip<std::int8_t>(H5T_STD_I8LE, "int8");
  hdf5_round_trip<std::int16_t>(H5T_STD_I16BE, "int16");
  hdf5_round_trip<std::int32_t>(H5T_STD_I32LE, "int32");
  hdf5_round_trip<std::int64_t>(H5T_STD_I64LE, "int64");
  hdf5_round_trip<std::uint8_t>(H5T_STD_U8LE, "uint8");
  hdf5_round_trip<std::uint16_t>(H5T_STD_U16LE, "uint16");
  hdf5_round_trip<std::uint32_t>(H5T_STD_U32BE, "uint32");
  hdf5_round_trip<std::uint64_t>(H5T_STD_U64LE, "uint64");
}

TEST_CASE("HDF5 default dataset is the only 2-D numeric one", "[io][points]") {
  TempDir dir;
  const auto values = table<float>(12, 3);
  const auto labels = table<std::int32_t>(12, 1);
  write_hdf5(dir / "one.h5", "/data/points", {12, 3}, H5T_IEEE_F32LE, H5T_NATIVE_FLOAT,
             values.data());
  write_hdf5(dir / "one.h5", "/labels", {12}, H5T_STD_I32LE, H5T_NATIVE_INT32, labels.data());
  const auto r = read_points(dir / "one.h5");
  CHECK(r.dataset == "/data/points");
  check_values(r, 0, 12, 3, true, false);

  write_hdf5(dir / "one.h5", "/other", {12, 3}, H5T_IEEE_F32LE, H5T_NATIVE_FLOAT, values.data());
  CHECK_THROWS_KIND(read_points(dir / "one.h5"), OptionError,
                    Catch::Matchers::Contains("PointReadOptions.dataset") &&
                        Catch::Matchers::Contains("/data/points, /other"));
  PointReadOptions named;
  named.dataset = "other";  // a leading "/" is optional
  CHECK(read_points(dir / "one.h5", named).dataset == "/other");
}

TEST_CASE("HDF5 bad inputs give one-line errors of the right kind", "[io][points]") {
  TempDir dir;
  const auto values = table<double>(10, 4);
  const auto file = dir / "bad.h5";
  write_hdf5(file, "/good", {10, 4}, H5T_IEEE_F64LE, H5T_NATIVE_DOUBLE, values.data());
  write_hdf5(file, "/cube", {2, 5, 4}, H5T_IEEE_F64LE, H5T_NATIVE_DOUBLE, values.data());
  write_hdf5(file, "/empty", {0, 4}, H5T_IEEE_F64LE, H5T_NATIVE_DOUBLE, values.data());
  write_string_dataset(file, "/names");
  write_compound_dataset(file, "/records");
  auto with = [](const std::string& dataset) {
    PointReadOptions o;
    o.dataset = dataset;
    return o;
  };
  CHECK_THROWS_KIND(read_points(file, with("/nope")), MissingInputError,
                    Contains("bad.h5") && Contains("/nope") && Contains("/good"));
  CHECK_THROWS_KIND(read_points(file, with("/no/such/group")), MissingInputError,
                    Contains("/no/such/group"));
  CHECK_THROWS_KIND(read_points(file, with("/cube")), DataError,
                    Contains("/cube") && Contains("3-D"));
  CHECK_THROWS_KIND(read_points(file, with("/empty")), DataError,
                    Contains("/empty") && Contains("0 rows"));
  CHECK_THROWS_KIND(read_points(file, with("/names")), DataError,
                    Contains("/names") && Contains("string"));
  CHECK_THROWS_KIND(read_points(file, with("/records")), DataError,
                    Contains("/records") && Contains("compound"));
  PointReadOptions outside = with("/good");
  outside.rows = RowRange{4, 11};
  CHECK_THROWS_KIND(read_points(file, outside), OptionError,
                    Contains("PointReadOptions.rows") && Contains("10 rows"));
  outside.rows = RowRange{10, std::nullopt};
  CHECK_THROWS_AS(read_points(file, outside), OptionError);
  CHECK_THROWS_KIND(read_points(dir / "absent.h5"), MissingInputError, Contains("absent.h5"));

  // A file cut in half, and random bytes under an .h5 name.
  const auto whole = read_bytes(file);
  write_bytes(dir / "half.h5", std::string(whole.begin(), whole.begin() + whole.size() / 2));
  CHECK_THROWS_KIND(read_points(dir / "half.h5", with("/good")), IoError, Contains("half.h5"));
  std::mt19937 gen(7);
  std::string noise(4096, '\0');
  for (char& c : noise) c = static_cast<char>(gen() & 0xff);
  write_bytes(dir / "noise.h5", noise);
  CHECK_THROWS_KIND(read_points(dir / "noise.h5"), IoError, Contains("noise.h5"));
}

TEST_CASE("HDF5 values beyond float32 and non-finite values are caught", "[io][points]") {
  TempDir dir;
  auto values = table<double>(20, 3);
  values[7 * 3 + 1] = 1e300;
  write_hdf5(dir / "big.h5", "/x", {20, 3}, H5T_IEEE_F64LE, H5T_NATIVE_DOUBLE, values.data());
  CHECK_THROWS_KIND(read_points(dir / "big.h5"), DataError,
                    Catch::Matchers::Contains("float32 range"));
  values[7 * 3 + 1] = std::numeric_limits<double>::infinity();
  values[12 * 3 + 0] = std::nan("");
  values[12 * 3 + 2] = -std::numeric_limits<double>::infinity();
  write_hdf5(dir / "nan.h5", "/x", {20, 3}, H5T_IEEE_F64BE, H5T_NATIVE_DOUBLE, values.data());
  CHECK_THROWS_KIND(read_points(dir / "nan.h5"), DataError,
                    Catch::Matchers::Contains("3 non-finite") &&
                        Catch::Matchers::Contains("2 row(s)") &&
                        Catch::Matchers::Contains("first at row 7"));
  PointReadOptions drop;
  drop.drop_nonfinite = true;
  const auto r = read_points(dir / "nan.h5", drop);
  CHECK(r.dropped_rows == std::vector<std::int64_t>{7, 12});
  REQUIRE(r.points.rows == 18);
  CHECK(r.rows[7] == 8);
  CHECK(as_read(r, 7, 0, value_at(8, 0, true, false)));
}

namespace {

// The table of value_at as text, `delimiter` between fields.
std::string csv_table(std::size_t rows, std::size_t cols, const std::string& delimiter) {
  std::string out;
  for (std::size_t i = 0; i < rows; ++i) {
    for (std::size_t j = 0; j < cols; ++j) {
      if (j) out += delimiter;
      out += std::to_string(value_at(i, j, true, false));
    }
    out += '\n';
  }
  return out;
}

// value_at in the NPY element type T, in the byte order and element order asked for.
template <class T>
std::string npy_bytes(std::size_t rows, std::size_t cols, bool big_endian, bool fortran) {
  std::string out;
  for (std::size_t a = 0; a < rows * cols; ++a) {
    const std::size_t i = fortran ? a % rows : a / cols;
    const std::size_t j = fortran ? a / rows : a % cols;
    const T v = static_cast<T>(value_at(i, j, std::is_floating_point_v<T>, std::is_unsigned_v<T>));
    char bytes[sizeof(T)];
    std::memcpy(bytes, &v, sizeof(T));
    if (big_endian == (std::endian::native == std::endian::little))
      std::reverse(bytes, bytes + sizeof(T));
    out.append(bytes, sizeof(T));
  }
  return out;
}

template <class T>
void npy_round_trip(const std::string& code, const std::string& type_name) {
  TempDir dir;
  const std::size_t rows = 23, cols = 4;
  int version = 1;
  for (const bool big : {false, true}) {
    for (const bool fortran : {false, true}) {
      const std::string descr = (sizeof(T) == 1 ? "|" : big ? ">" : "<") + code;
      INFO(descr << (fortran ? " Fortran order" : " C order") << " version " << version);
      const auto file = dir.path() / ("version" + std::to_string(version)) += ".npy";
      write_npy(file, descr, {rows, cols}, fortran, npy_bytes<T>(rows, cols, big, fortran),
                version);
      const auto r = read_points(file);
      CHECK(r.format == "npy");
      CHECK(r.source_type == type_name);
      check_values(r, 0, rows, cols, std::is_floating_point_v<T>, std::is_unsigned_v<T>);
      PointReadOptions part;
      part.rows = RowRange{5, 19};
      check_values(read_points(file, part), 5, 14, cols, std::is_floating_point_v<T>,
                   std::is_unsigned_v<T>);
      version = version % 3 + 1;  // the header versions 1.0, 2.0 and 3.0 in turn
    }
  }
}

}  // namespace

TEST_CASE("CSV with and without header, each delimiter, comments and blank lines", "[io][points]") {
  TempDir dir;
  const std::size_t rows = 31, cols = 4;
  for (const std::string delimiter : {",", "\t", ";", " ", "  \t "}) {
    INFO("delimiter '" << delimiter << "'");
    const auto plain = dir / "plain.csv";
    write_bytes(plain, csv_table(rows, cols, delimiter));
    const auto r = read_points(plain);
    CHECK(r.format == "csv");
    CHECK(r.column_names.empty());
    check_values(r, 0, rows, cols, true, false);

    const std::string body = csv_table(rows, cols, delimiter);
    const std::string header = "# made by the point reader test\n\n\"x\"" + delimiter + "y" +
                               delimiter + "z" + delimiter + "w\r\n";
    const auto headed = dir / "headed.txt";
    const std::size_t cut = body.find('\n', body.size() / 2) + 1;  // a line boundary
    write_bytes(headed, header + body.substr(0, cut) + "# a comment\n\n" + body.substr(cut));
    const auto h = read_points(headed);
    CHECK(h.column_names == std::vector<std::string>{"x", "y", "z", "w"});
    check_values(h, 0, rows, cols, true, false);
    PointReadOptions part;
    part.rows = RowRange{3, 29};
    check_values(read_points(headed, part), 3, 26, cols, true, false);
  }
  const auto bom = dir / "bom.csv";  // a UTF-8 byte order mark before numbers: still data
  write_bytes(bom, "\xEF\xBB\xBF" + csv_table(rows, cols, ","));
  check_values(read_points(bom), 0, rows, cols, true, false);
  const auto tsv = dir / "t.tsv";
  write_bytes(tsv, csv_table(rows, cols, "\t"));
  CHECK(read_points(tsv).format == "tsv");
  check_values(read_points(tsv), 0, rows, cols, true, false);
}

TEST_CASE("CSV bad inputs name the file, line and column", "[io][points]") {
  TempDir dir;
  const auto ragged = dir / "ragged.csv";
  write_bytes(ragged, "a,b,c\n1,2,3\n# note\n4,5,6\n7,8\n");
  CHECK_THROWS_KIND(read_points(ragged), DataError,
                    Contains("ragged.csv line 5") && Contains("2 fields where 3"));
  const auto word = dir / "word.csv";
  write_bytes(word, "1,2,3\n4,five,6\n");
  CHECK_THROWS_KIND(read_points(word), DataError,
                    Contains("word.csv line 2, column 2") && Contains("'five'"));
  const auto empty_cell = dir / "cell.csv";
  write_bytes(empty_cell, "1,2,3\n4,,6\n");
  CHECK_THROWS_KIND(read_points(empty_cell), DataError, Contains("line 2, column 2"));
  const auto header_only = dir / "header.csv";
  write_bytes(header_only, "# nothing\nx,y\n");
  CHECK_THROWS_KIND(read_points(header_only), DataError, Contains("no data rows"));
  const auto huge = dir / "huge.csv";
  write_bytes(huge, "1,2\n3,1e60\n");
  CHECK_THROWS_KIND(read_points(huge), DataError, Contains("line 2, column 2"));
  const auto nan = dir / "nan.csv";
  write_bytes(nan, "1,2\nnan,4\n5,inf\n7,8\n");
  CHECK_THROWS_KIND(read_points(nan), DataError,
                    Contains("2 non-finite") && Contains("first at row 1 column 0"));
  PointReadOptions outside;
  outside.rows = RowRange{2, 9};
  CHECK_THROWS_KIND(read_points(nan, outside), OptionError,
                    Contains("PointReadOptions.rows") && Contains("4 rows"));
}

TEST_CASE("Offsets keep their digits: centres in double, keys of the values as read",
          "[io][points]") {
  TempDir dir;
  const auto file = dir / "offset.csv";
  // float32 holds 1000000.001 and 1000000.002 as the same number (a step of 0.0625 there).
  write_bytes(file, "1000000.001,5\n1000000.002,5\n1000000.001,5\n");
  const auto r = read_points(file);
  REQUIRE(r.centres.size() == 2);
  CHECK(r.centres[0] == Approx(1000000.0013333333).epsilon(1e-15));
  CHECK(r.centres[1] == 5.0);
  CHECK(r.points.row(0)[0] == Approx(-0.0003333333).epsilon(1e-5));
  CHECK(r.points.row(1)[0] == Approx(0.0006666667).epsilon(1e-5));
  CHECK(r.points.row(0)[0] == r.points.row(2)[0]);
  REQUIRE(r.points.row_keys.size() == 3);
  CHECK(r.points.row_keys[0] == r.points.row_keys[2]);
  CHECK(r.points.row_keys[0] != r.points.row_keys[1]);
  CHECK(r.warnings.empty());

  // Given centres (a map's record) are subtracted as they are; rows 0 and 1 now meet in
  // float32 but keep different keys, and the lost column is named.
  PointReadOptions fixed;
  fixed.centres = std::vector<double>{0.0, 0.0};
  const auto f = read_points(file, fixed);
  CHECK(f.centres == std::vector<double>{0.0, 0.0});
  CHECK(f.points.row(0)[0] == 1000000.0f);
  CHECK(f.points.row(0)[0] == f.points.row(1)[0]);
  CHECK(f.points.row_keys[0] != f.points.row_keys[1]);
  REQUIRE(f.warnings.size() == 1);
  CHECK_THAT(f.warnings[0],
             Contains("offset.csv") && Contains("column(s) 0 ") && Contains("float32 resolution"));
  fixed.centres = std::vector<double>{0.0};
  CHECK_THROWS_KIND(read_points(file, fixed), DataError, Contains("/input/centres records 1"));

  // A value beyond float32 is fine when its column's centre brings it back in range.
  const auto far = dir / "far.npy";
  std::string bytes;
  for (const double v : {1e39, 1e39 + 1e30, 1e39 - 1e30}) {
    char b[8];
    std::memcpy(b, &v, 8);
    bytes.append(b, 8);
  }
  write_npy(far, "<f8", {3}, false, bytes, 1);
  const auto fr = read_points(far);
  CHECK(fr.centres[0] == Approx(1e39).epsilon(1e-15));
  CHECK(fr.points.row(1)[0] == Approx(1e30).epsilon(1e-6));
}

TEST_CASE("NPY round trip: each dtype, both byte orders, C and Fortran order", "[io][points]") {
  npy_round_trip<float>("f4", "float32");
  npy_round_trip<double>("f8", "float64");
  npy_round_trip<std::int8_t>("i1", "int8");
  npy_round_trip<std::int16_t>("i2", "int16");
  npy_round_trip<std::int32_t>("i4", "int32");
  npy_round_trip<std::int64_t>("i8", "int64");
  npy_round_trip<std::uint8_t>("u1", "uint8");
  npy_round_trip<std::uint16_t>("u2", "uint16");
  npy_round_trip<std::uint32_t>("u4", "uint32");
  npy_round_trip<std::uint64_t>("u8", "uint64");
}

TEST_CASE("NPY 1-D is one column; bad NPY inputs are errors", "[io][points]") {
  TempDir dir;
  write_npy(dir / "line.npy", "<f8", {9}, false, npy_bytes<double>(9, 1, false, false));
  check_values(read_points(dir / "line.npy"), 0, 9, 1, true, false);

  const std::string data = npy_bytes<double>(10, 3, false, false);
  write_npy(dir / "cut.npy", "<f8", {10, 3}, false, data.substr(0, data.size() - 5));
  CHECK_THROWS_KIND(read_points(dir / "cut.npy"), IoError,
                    Contains("cut.npy") && Contains("truncated"));
  write_npy(dir / "cube.npy", "<f8", {2, 5, 3}, false, data);
  CHECK_THROWS_KIND(read_points(dir / "cube.npy"), DataError, Contains("3-D"));
  write_npy(dir / "zero.npy", "<f8", {0, 3}, false, "");
  CHECK_THROWS_KIND(read_points(dir / "zero.npy"), DataError, Contains("0 rows"));
  write_npy(dir / "complex.npy", "<c16", {5, 3}, false, data);
  CHECK_THROWS_KIND(read_points(dir / "complex.npy"), DataError, Contains("'<c16'"));
  write_npy(dir / "text.npy", "<U3", {10, 1}, false, data);
  CHECK_THROWS_KIND(read_points(dir / "text.npy"), DataError, Contains("<U3"));
  write_bytes(dir / "header.npy", "\x93NUMPY\x01\x00\xff\x00{'descr'");
  CHECK_THROWS_KIND(read_points(dir / "header.npy"), IoError, Contains("header"));
  write_bytes(dir / "v9.npy", std::string("\x93NUMPY\x09\x00\x10\x00", 10) + std::string(16, ' '));
  CHECK_THROWS_KIND(read_points(dir / "v9.npy"), DataError, Contains("version 9"));
  std::string big = npy_bytes<double>(4, 2, false, false);
  const double too_big = 1e200;
  std::memcpy(big.data() + 5 * sizeof(double), &too_big, sizeof too_big);
  write_npy(dir / "big.npy", "<f8", {4, 2}, false, big);
  CHECK_THROWS_KIND(read_points(dir / "big.npy"), DataError,
                    Contains("row 2 column 1") && Contains("float32 range"));
}

namespace {

// An NPY version 1.0 file with `dict` as its header text, padded as numpy pads it.
std::string npy_with_header(std::string dict, const std::string& data) {
  dict.append(63 - (10 + dict.size()) % 64, ' ');
  dict += '\n';
  const auto len = static_cast<unsigned char>(dict.size());
  return std::string("\x93NUMPY\x01\x00", 8) + static_cast<char>(len) + '\0' + dict + data;
}

}  // namespace

TEST_CASE("Damaged text and NPY are refused by name", "[io][points]") {
  TempDir dir;
  // A decimal number beyond float64 (400 digits, no exponent) once read as 0.
  write_bytes(dir / "long.csv", "1,2\n3," + std::string(400, '9') + "\n");
  CHECK_THROWS_KIND(read_points(dir / "long.csv"), DataError,
                    Contains("long.csv line 2, column 2") && Contains("float64 range"));
  write_bytes(dir / "tiny.csv", "1,2\n3,1e-400\n");  // underflow: zero, as numpy reads it
  CHECK(as_read(read_points(dir / "tiny.csv"), 1, 1, 0.0));
  write_bytes(dir / "nul.csv", std::string("1,2\n3,\0 4\n", 11));
  CHECK_THROWS_KIND(read_points(dir / "nul.csv"), DataError,
                    Contains("nul.csv: line 2") && Contains("NUL byte"));
  write_bytes(dir / "cr.csv", "1,2\r3,4\r5,6\r");
  CHECK_THROWS_KIND(read_points(dir / "cr.csv"), DataError,
                    Contains("cr.csv: line 1") && Contains("carriage return"));
  PointReadOptions as_npy;
  as_npy.format = "npy";
  CHECK_THROWS_KIND(read_points(dir / "cr.csv", as_npy), DataError, Contains("not an NPY file"));

  const std::string data = npy_bytes<double>(3, 2, false, false);
  write_npy(dir / "tail.npy", "<f8", {3, 2}, false, data + "extra");
  CHECK_THROWS_KIND(read_points(dir / "tail.npy"), DataError,
                    Contains("tail.npy") && Contains("5 bytes of trailing data"));
  const std::string good = "{'descr': '<f8', 'fortran_order': False, 'shape': (3, 2), }";
  write_bytes(dir / "good.npy", npy_with_header(good, data));
  check_values(read_points(dir / "good.npy"), 0, 3, 2, true, false);
  for (const std::string& dict :
       {std::string("{'descr': '<f8', 'fortran_order': False, 'shape': (3, 2), 'x': 1}"),
        std::string("{'descr': '<f8', 'fortran_order': False, 'shape': (3, 2)"),
        std::string("{'descr': '<f8', 'fortran_order': False, 'shape': (3, two)}"),
        std::string("{'descr': '<f8', 'shape': (3, 2)}"),
        std::string("{'descr': '<f8', 'fortran_order': False, 'shape': (3, 2)} junk"),
        std::string("{'descr': '<f8', 'descr': '<f4', 'fortran_order': False, 'shape': (3, 2)}")}) {
    CAPTURE(dict);
    write_bytes(dir / "bad.npy", npy_with_header(dict, data));
    CHECK_THROWS_KIND(read_points(dir / "bad.npy"), DataError,
                      Contains("bad.npy: malformed NPY header"));
  }
}

TEST_CASE("The format comes from the magic bytes first, then the extension", "[io][points]") {
  TempDir dir;
  const auto values = table<float>(6, 2);
  write_hdf5(dir / "points.dat", "/x", {6, 2}, H5T_IEEE_F32LE, H5T_NATIVE_FLOAT, values.data());
  CHECK(read_points(dir / "points.dat").format == "hdf5");
  write_npy(dir / "points.bin", "<f4", {6, 2}, false, npy_bytes<float>(6, 2, false, false));
  CHECK(read_points(dir / "points.bin").format == "npy");
  PointReadOptions bad;
  bad.format = "xlsx";
  CHECK_THROWS_KIND(read_points(dir / "points.bin", bad), OptionError,
                    Contains("PointReadOptions.format"));
  PointReadOptions dataset_on_npy;
  dataset_on_npy.dataset = "/x";
  CHECK_THROWS_KIND(read_points(dir / "points.bin", dataset_on_npy), OptionError,
                    Contains("PointReadOptions.dataset"));
}

TEST_CASE("A stop request ends a read with InterruptedError", "[io][points]") {
  TempDir dir;
  const auto values = table<float>(20, 3);
  write_hdf5(dir / "s.h5", "/x", {20, 3}, H5T_IEEE_F32LE, H5T_NATIVE_FLOAT, values.data());
  write_npy(dir / "s.npy", ">f4", {20, 3}, false, npy_bytes<float>(20, 3, true, false));
  std::atomic<bool> stop{true};
  PointReadOptions options;
  options.stop = StopToken{&stop};
  CHECK_THROWS_KIND(read_points(dir / "s.h5", options), InterruptedError, Contains("stopped"));
  CHECK_THROWS_KIND(read_points(dir / "s.npy", options), InterruptedError, Contains("stopped"));
}

TEST_CASE("Damaged files give project errors, never a crash or another exception", "[io][points]") {
  // Bytes flipped at seeded random places in valid files (common practice, no source).
  TempDir dir;
  const auto values = table<double>(64, 4);
  write_hdf5(dir / "ok.h5", "/g/x", {64, 4}, H5T_IEEE_F64LE, H5T_NATIVE_DOUBLE, values.data(),
             {true, 16, 3});
  write_hdf5_attribute(dir / "ok.h5", "/", "origin", "damaged-file test");
  write_hdf5_attribute(dir / "ok.h5", "/g/x", "units", "metres");
  write_npy(dir / "ok.npy", ">f8", {64, 4}, true, npy_bytes<double>(64, 4, true, true));
  std::mt19937 gen(2026);
  for (const char* name : {"ok.h5", "ok.npy"}) {
    const std::string whole = read_bytes(dir / name);
    const bool hdf5 = std::string(name) == "ok.h5";
    // NPY damage goes to the header, where parsing happens; HDF5 damage anywhere.
    const std::size_t span = hdf5 ? whole.size() : 128;
    for (int trial = 0; trial < 400; ++trial) {
      std::string bytes = whole;
      for (int k = 0; k < 3; ++k) bytes[gen() % span] = static_cast<char>(gen() & 0xff);
      if (trial % 5 == 0) bytes.resize(gen() % bytes.size());
      const auto damaged = dir / ("damaged" + std::filesystem::path(name).extension().string());
      write_bytes(damaged, bytes);
      std::string outcome = "read";
      std::optional<LeakCheckPause> pause;
      if (hdf5) pause.emplace();
      try {
        (void)describe_file(damaged);  // what inspect reads first
      } catch (const Error&) {
      }
      try {
        (void)read_points(damaged);
      } catch (const Error& e) {
        outcome = std::string(e.what()).find('\n') == std::string::npos ? "error" : "multi-line";
      } catch (const std::exception& e) {
        outcome = std::string("foreign exception: ") + e.what();
      }
      INFO(name << " trial " << trial);
      CHECK((outcome == "read" || outcome == "error"));
    }
  }
}
