#include "engine/placement.hpp"

#include <omp.h>

#include <catch2/catch.hpp>

#include "engine/error.hpp"
#include "engine/random.hpp"
#include "engine/spectral.hpp"
#include "tests/test_util.hpp"

using namespace unfurl;

namespace {

PointSet random_points(std::size_t n, std::uint64_t seed) {
  Random rng(seed);
  PointSet p(n, 3);
  const double spread[3] = {4.0, 2.0, 1.0};
  for (std::size_t i = 0; i < n; ++i)
    for (std::size_t c = 0; c < 3; ++c)
      p.row(i)[c] = static_cast<float>(spread[c] * (2.0 * rng.uniform() - 1.0));
  return p;
}

struct EuclideanMap {
  PointSet points;
  DistanceRows rows;
  SpectralResult map;
  Triangulation triangulation;
  LandmarkColumns columns;
};

// Landmark MDS of Euclidean rows (distances from 12 landmarks spanning R^3), the situation
// in which de Silva and Tenenbaum (2004) show the triangulation to be exact.
EuclideanMap euclidean_map() {
  EuclideanMap m;
  m.points = random_points(60, 5);
  std::vector<NodeId> landmarks;
  for (NodeId i = 0; i < 12; ++i) landmarks.push_back(i * 5);
  m.rows = test::euclidean_rows(m.points, landmarks);
  SpectralOptions so;
  so.dims = 3;
  m.map = landmark_mds(m.rows, so);
  m.triangulation = triangulation_of_map(m.rows, m.map.landmark_coords, m.map.spectrum, 3);
  m.columns = columns_of(m.rows);
  return m;
}

}  // namespace

TEST_CASE("placement: reference points placed again land on their map rows", "[placement]") {
  const EuclideanMap m = euclidean_map();
  PlaceOptions o;
  o.k = 5;
  const PlaceResult r = place_points(m.points, m.columns, m.triangulation, m.points, o);
  REQUIRE(r.coords.rows == m.points.rows);
  for (std::size_t i = 0; i < r.coords.values.size(); ++i)
    CHECK(r.coords.values[i] == Approx(m.map.coords.values[i]).margin(1e-5));
  CHECK(r.summary.far == 0);
}

TEST_CASE("placement: exact for Euclidean distances when every landmark is a neighbour",
          "[placement]") {
  // New points join all reference points, so delta is the Euclidean distance to each
  // landmark; landmark MDS then recovers the configuration up to a rigid motion (de Silva
  // and Tenenbaum 2004), checked by the Procrustes disparity against the true points.
  const EuclideanMap m = euclidean_map();
  const PointSet fresh = random_points(25, 9);
  PlaceOptions o;
  o.k = m.points.rows;
  const PlaceResult r = place_points(m.points, m.columns, m.triangulation, fresh, o);
  CHECK(test::procrustes_disparity(fresh.values, r.coords.values, fresh.rows, 3) < 1e-10);
}

TEST_CASE("placement: results do not depend on the thread count", "[placement]") {
  const EuclideanMap m = euclidean_map();
  const PointSet fresh = random_points(700, 11);
  PlaceOptions o;
  o.block_rows = 128;
  const int before = omp_get_max_threads();
  omp_set_num_threads(1);
  const PlaceResult one = place_points(m.points, m.columns, m.triangulation, fresh, o);
  omp_set_num_threads(2);
  const PlaceResult two = place_points(m.points, m.columns, m.triangulation, fresh, o);
  omp_set_num_threads(before);
  CHECK(one.coords.values == two.coords.values);
  CHECK(one.nearest_ratio == two.nearest_ratio);
}

TEST_CASE("placement: a far point is flagged and ranked", "[placement]") {
  const EuclideanMap m = euclidean_map();
  PointSet fresh = random_points(10, 13);
  for (std::size_t c = 0; c < 3; ++c) fresh.row(7)[c] += 100.0f;
  const PlaceResult r = place_points(m.points, m.columns, m.triangulation, fresh, PlaceOptions{});
  CHECK(r.summary.far >= 1);
  REQUIRE(!r.summary.worst.empty());
  CHECK(r.summary.worst.front().row == 7);
  CHECK(r.far[7] == 1);
}

TEST_CASE("placement: options and sizes are checked", "[placement]") {
  const EuclideanMap m = euclidean_map();
  PlaceOptions o;
  o.k = 0;
  CHECK_THROWS_WITH(o.validate(60), Catch::Contains("PlaceOptions.k"));
  o.k = 61;
  CHECK_THROWS_WITH(o.validate(60), Catch::Contains("PlaceOptions.k"));
  o = PlaceOptions{};
  o.far_ratio = 0.0;
  CHECK_THROWS_WITH(o.validate(60), Catch::Contains("PlaceOptions.far_ratio"));
  o = PlaceOptions{};
  o.block_rows = 0;
  CHECK_THROWS_AS(o.validate(60), OptionError);
  const PointSet wrong(4, 2);
  CHECK_THROWS_WITH(place_points(m.points, m.columns, m.triangulation, wrong, PlaceOptions{}),
                    Catch::Contains("2 columns") && Catch::Contains("3"));
  CHECK_THROWS_AS(triangulation_of_map(m.rows, m.map.landmark_coords, m.map.spectrum, 4),
                  DataError);
}
