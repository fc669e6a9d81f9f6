#include "io/csv_writer.hpp"

#include <catch2/catch.hpp>
#include <charconv>
#include <cmath>
#include <cstring>
#include <limits>
#include <sstream>

#include "engine/error.hpp"
#include "engine/random.hpp"
#include "tests/io/temp_folder.hpp"

namespace {

std::vector<std::string> split(const std::string& line) {
  std::vector<std::string> out;
  std::stringstream s(line);
  std::string field;
  while (std::getline(s, field, ',')) out.push_back(field);
  return out;
}

std::uint32_t bits(float f) {
  std::uint32_t b;
  std::memcpy(&b, &f, 4);
  return b;
}

}  // namespace

TEST_CASE("coordinate CSV reads back bit for bit", "[csv_writer]") {
  unfurl::test::TempFolder dir;
  unfurl::Random rng(8);
  unfurl::PointSet coords(500, 3);
  // Random bit patterns cover every exponent; NaN and infinities are not coordinates.
  for (auto& v : coords.values) {
    std::uint32_t b = 0;
    do {
      b = static_cast<std::uint32_t>(rng.uniform() * 4294967296.0);
      std::memcpy(&v, &b, 4);
    } while (!std::isfinite(v));
  }
  coords.values[0] = 0.1f;
  coords.values[1] = -0.0f;
  coords.values[2] = std::numeric_limits<float>::denorm_min();
  std::vector<std::int64_t> rows;
  for (std::int64_t i = 0; i < 500; ++i) rows.push_back(i * 7 + 3);
  unfurl::io::write_coordinates_csv(dir / "map.csv", coords, rows);

  std::istringstream text(unfurl::test::file_bytes(dir / "map.csv"));
  std::string line;
  REQUIRE(std::getline(text, line));
  CHECK(line == "row,x1,x2,x3");
  std::size_t i = 0;
  while (std::getline(text, line)) {
    const auto f = split(line);
    REQUIRE(f.size() == 4);
    REQUIRE(i < 500);
    CHECK(std::stoll(f[0]) == rows[i]);
    for (std::size_t c = 0; c < 3; ++c) {
      float v = 0;
      const auto r = std::from_chars(f[c + 1].data(), f[c + 1].data() + f[c + 1].size(), v);
      REQUIRE(r.ec == std::errc());
      CHECK(bits(v) == bits(coords.row(i)[c]));
    }
    ++i;
  }
  CHECK(i == 500);
  // Shortest form: 0.1f prints as "0.1", not as its 9-digit expansion.
  CHECK(split(unfurl::test::file_bytes(dir / "map.csv").substr(13, 40))[1] == "0.1");
}

TEST_CASE("coordinate CSV names its columns and quotes odd names", "[csv_writer]") {
  unfurl::test::TempFolder dir;
  unfurl::PointSet coords(1, 2);
  coords.values = {1.5f, -2.0f};
  const std::vector<std::int64_t> rows = {9};
  unfurl::io::write_coordinates_csv(dir / "a.csv", coords, rows, {"east", "depth, m"});
  CHECK(unfurl::test::file_bytes(dir / "a.csv") == "row,east,\"depth, m\"\n9,1.5,-2\n");
}

TEST_CASE("coordinate CSV write failures leave the old file", "[csv_writer]") {
  unfurl::test::TempFolder dir;
  unfurl::PointSet coords(2, 1);
  coords.values = {1.0f, 2.0f};
  const std::vector<std::int64_t> rows = {0, 1};
  unfurl::io::write_coordinates_csv(dir / "a.csv", coords, rows);
  const std::string before = unfurl::test::file_bytes(dir / "a.csv");
  const std::vector<std::int64_t> short_rows = {0};
  CHECK_THROWS_AS(unfurl::io::write_coordinates_csv(dir / "a.csv", coords, short_rows),
                  unfurl::InternalError);
  CHECK_THROWS_AS(unfurl::io::write_coordinates_csv(dir / "none" / "a.csv", coords, rows),
                  unfurl::OutputError);
  CHECK_THROWS_AS(unfurl::io::write_coordinates_csv(dir.path(), coords, rows), unfurl::OutputError);
  CHECK(unfurl::test::file_bytes(dir / "a.csv") == before);
  CHECK(dir.entries() == std::vector<std::string>{"a.csv"});
}
