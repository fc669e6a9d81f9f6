#include "engine/spectral.hpp"

#include <omp.h>

#include <atomic>
#include <catch2/catch.hpp>
#include <cmath>
#include <numeric>

#include "engine/error.hpp"
#include "engine/geodesic.hpp"
#include "engine/landmarks.hpp"
#include "engine/random.hpp"
#include "tests/test_util.hpp"

using unfurl::NodeId;

namespace {

unfurl::PointSet random_points(std::size_t n, std::size_t d, std::uint64_t seed) {
  unfurl::PointSet p(n, d);
  unfurl::Random rng(seed);
  for (float& v : p.values) v = static_cast<float>(rng.normal());
  return p;
}

std::vector<NodeId> every(std::size_t n) {
  std::vector<NodeId> ids(n);
  std::iota(ids.begin(), ids.end(), NodeId{0});
  return ids;
}

}  // namespace

TEST_CASE("classical MDS recovers a Euclidean configuration", "[spectral]") {
  // Schoenberg 1935; Young and Householder 1938: the full distance matrix of points in R^3
  // gives back a configuration with the same pairwise distances, and B has rank 3.
  const auto p = random_points(60, 3, 1);
  const auto rows = unfurl::test::euclidean_rows(p, every(60));
  for (std::size_t dense_limit : {1000u, 0u}) {  // dense solver, then the implicit Lanczos one
    unfurl::SpectralOptions o;
    o.dims = 3;
    o.dense_limit = dense_limit;
    const auto r = unfurl::exact_mds(rows, o);
    CHECK(r.summary.solver == (dense_limit ? "dense" : "lanczos"));
    CHECK(r.summary.converged);
    REQUIRE(r.coords.rows == 60);
    REQUIRE(r.coords.cols == 3);
    CHECK(unfurl::test::pairwise_distance_error(r.coords.values, 3, p.values, 3, 60) < 1e-4);
    CHECK(unfurl::test::procrustes_disparity(r.coords.values, p.values, 60, 3) < 1e-9);
    // A Euclidean matrix has no negative eigenvalues beyond float32 rounding.
    CHECK(r.negative_ratio < 1e-5);
  }
}

TEST_CASE("landmark MDS equals classical MDS on Euclidean data", "[spectral]") {
  // de Silva and Tenenbaum 2004: with landmarks that affinely span R^3, triangulation puts
  // every point where classical MDS on all points puts it (up to a rigid motion).
  const auto p = random_points(400, 3, 2);
  const auto all = unfurl::test::euclidean_rows(p, every(400));
  const std::vector<NodeId> landmarks{3, 77, 150, 201, 260, 333, 399, 12};
  const auto rows = unfurl::test::euclidean_rows(p, landmarks);
  unfurl::SpectralOptions o;
  o.dims = 3;
  const auto cmds = unfurl::exact_mds(all, o);
  o.dense_limit = 0;  // the Lanczos solver on the dense landmark matrix
  const auto lanczos = unfurl::landmark_mds(rows, o);
  CHECK(lanczos.summary.solver == "lanczos");
  CHECK(unfurl::test::procrustes_disparity(lanczos.coords.values, cmds.coords.values, 400, 3) <
        1e-9);
  o.dense_limit = 1000;
  const auto lmds = unfurl::landmark_mds(rows, o);
  CHECK(lmds.summary.solver == "dense");
  CHECK(unfurl::test::procrustes_disparity(lmds.coords.values, cmds.coords.values, 400, 3) < 1e-9);
  CHECK(unfurl::test::pairwise_distance_error(lmds.coords.values, 3, p.values, 3, 400) < 1e-3);
  // The landmarks' own coordinates agree with their triangulated rows.
  for (std::size_t k = 0; k < landmarks.size(); ++k)
    for (std::size_t a = 0; a < 3; ++a)
      CHECK(lmds.landmark_coords[k * 3 + a] ==
            Approx(lmds.coords.row(landmarks[k])[a]).margin(1e-4));
}

TEST_CASE("the 4-cycle's geodesics are non-Euclidean with a known spectrum", "[spectral]") {
  // Hand-derived from the circulant squared-distance matrix with first row (0, 1, 4, 1):
  // its eigenvalues are 6, -4, 2, -4, so B = -1/2 J S J has 2, 2, 0, -1 and the negative
  // ratio is 1 / 4. The criterion that negative eigenvalues mean "not Euclidean" is
  // Schoenberg 1935.
  const auto g =
      unfurl::test::graph_from_edges(4, {{0, 1, 1.f}, {1, 2, 1.f}, {2, 3, 1.f}, {3, 0, 1.f}});
  const auto rows = unfurl::geodesic_rows(g, {unfurl::EveryNode{}}).rows;
  unfurl::SpectralOptions o;
  o.dims = 2;
  const auto r = unfurl::exact_mds(rows, o);
  REQUIRE(r.spectrum.size() == 4);
  CHECK(r.summary.spectrum_complete);
  CHECK(r.spectrum[0] == Approx(2.0));
  CHECK(r.spectrum[1] == Approx(2.0));
  CHECK(r.spectrum[2] == Approx(0.0).margin(1e-9));
  CHECK(r.spectrum[3] == Approx(-1.0));
  CHECK(r.negative_ratio == Approx(0.25));
  CHECK(r.summary.positive == 2);
  CHECK(r.summary.negative == 1);
  // The third eigenvalue is 0 up to rounding: the axis is named as carrying no structure and
  // warned about; its width is rounding too.
  o.dims = 3;
  const auto three = unfurl::exact_mds(rows, o);
  CHECK(three.summary.noise_axes == std::vector<std::size_t>{3});
  for (std::size_t i = 0; i < 4; ++i) CHECK(std::abs(three.coords.row(i)[2]) < 1e-6f);
  REQUIRE(!three.summary.warnings.empty());
  CHECK_THAT(three.summary.warnings.back(), Catch::Contains("axis 3 carries no structure"));
}

TEST_CASE("each axis' sign is fixed by its largest landmark coordinate", "[spectral]") {
  const auto p = random_points(50, 2, 5);
  const auto rows = unfurl::test::euclidean_rows(p, {0, 10, 20, 30, 40});
  unfurl::SpectralOptions o;
  const auto r = unfurl::landmark_mds(rows, o);
  for (std::size_t a = 0; a < 2; ++a) {
    double largest = 0.0;
    for (std::size_t k = 0; k < 5; ++k)
      if (std::abs(r.landmark_coords[k * 2 + a]) > std::abs(largest))
        largest = r.landmark_coords[k * 2 + a];
    CHECK(largest > 0.0);
  }
  CHECK(r.spectrum[0] >= r.spectrum[1]);
}

TEST_CASE("landmark and exact MDS give the same bytes on 1 and 2 threads", "[spectral]") {
  const auto g = unfurl::test::random_connected_graph(1500, 4000, 6);
  unfurl::LandmarkOptions lo;
  lo.count = unfurl::LandmarkCount{30};
  const auto landmarks = unfurl::pick_landmarks(g, lo);
  const auto all = unfurl::geodesic_rows(g, {unfurl::EveryNode{}}).rows;
  unfurl::SpectralOptions o;
  const int before = omp_get_max_threads();
  omp_set_num_threads(1);
  const auto l1 = unfurl::landmark_mds(landmarks.rows, o);
  const auto e1 = unfurl::exact_mds(all, o);
  omp_set_num_threads(2);
  const auto l2 = unfurl::landmark_mds(landmarks.rows, o);
  const auto e2 = unfurl::exact_mds(all, o);
  omp_set_num_threads(before);
  CHECK(e1.summary.solver == "lanczos");
  CHECK(l1.coords.values == l2.coords.values);
  CHECK(e1.coords.values == e2.coords.values);
  CHECK(e1.spectrum == e2.spectrum);
}

TEST_CASE("spectral options and rows are validated", "[spectral]") {
  unfurl::SpectralOptions o;
  o.dims = 0;
  CHECK_THROWS_WITH(o.validate(10), Catch::Contains("SpectralOptions.dims: must be at least 1"));
  o.dims = 10;
  CHECK_THROWS_WITH(o.validate(10), Catch::Contains("SpectralOptions.dims: must be below"));
  o.dims = 2;
  o.krylov = 2;
  CHECK_THROWS_WITH(o.validate(10), Catch::Contains("krylov"));
  o.krylov = 0;
  const auto p = random_points(20, 2, 3);
  auto rows = unfurl::test::euclidean_rows(p, {0, 5, 9});
  rows.values[7] = std::numeric_limits<float>::infinity();
  CHECK_THROWS_WITH(unfurl::landmark_mds(rows, o), Catch::Contains("geodesic row 0, node 7"));
  // Rows are checked in parallel; the message still names the first bad value in row order.
  rows = unfurl::test::euclidean_rows(p, {0, 5, 9});
  rows.values[2 * 20 + 1] = std::nanf("");
  rows.values[1 * 20 + 13] = -1.0f;
  CHECK_THROWS_WITH(unfurl::landmark_mds(rows, o), Catch::Contains("geodesic row 1, node 13"));
  rows = unfurl::test::euclidean_rows(p, {0, 5, 9});
  CHECK_THROWS_WITH(unfurl::exact_mds(rows, o), Catch::Contains("one geodesic row per node"));
  std::atomic<bool> flag{true};
  CHECK_THROWS_AS(unfurl::landmark_mds(rows, o, unfurl::StopToken{&flag}),
                  unfurl::InterruptedError);
}

TEST_CASE("exact mode memory estimate counts the N x N rows", "[spectral]") {
  const std::size_t n = 10000;
  const std::size_t bytes = unfurl::exact_mode_bytes(n);
  CHECK(bytes >= n * n * sizeof(float));
  // The mass estimate's Lanczos vectors (probes x quadrature float32 columns of length n, as
  // engine/detail/absolute_trace.hpp allocates them) are part of the peak, not only
  // Spectra's basis.
  const unfurl::SpectralOptions o;
  CHECK(bytes >= n * n * sizeof(float) + o.probes * o.quadrature * n * sizeof(float));
  CHECK(bytes < n * n * sizeof(float) * 12 / 10);  // rows dominate far above dense_limit
}

TEST_CASE("exact mode's implicit operator agrees with the dense solver, triangle or whole",
          "[spectral]") {
  // The dense path forms B = -1/2 J S J explicitly (Torgerson 1952's double centring); the
  // implicit operator must give the same top eigenpairs whether it reads only the upper
  // triangle (exactly symmetric rows, as all_geodesic_rows returns) or the whole matrix
  // (rows a last bit apart across the diagonal, as two separate Dijkstra runs can give).
  const auto g = unfurl::test::random_connected_graph(400, 1200, 4);
  const auto rows = unfurl::geodesic_rows(g, {unfurl::EveryNode{}}).rows;
  for (std::size_t i = 0; i < rows.rows; ++i)
    for (std::size_t j = 0; j < i; ++j) REQUIRE(rows.row(i)[j] == rows.row(j)[i]);
  auto skewed = rows;
  for (std::size_t i = 0; i < skewed.rows; ++i)
    for (std::size_t j = i + 1; j < skewed.rows; j += 7)
      skewed.row(j)[i] = std::nextafter(skewed.row(i)[j], 1e30f);
  unfurl::SpectralOptions o;
  o.dims = 3;
  o.dense_limit = 1000;
  const auto dense = unfurl::exact_mds(rows, o);
  o.dense_limit = 100;
  const auto triangle = unfurl::exact_mds(rows, o);
  const auto whole = unfurl::exact_mds(skewed, o);
  REQUIRE(dense.summary.solver == "dense");
  REQUIRE(triangle.summary.solver == "lanczos");
  for (std::size_t a = 0; a < 3; ++a) {
    CHECK(triangle.spectrum[a] == Approx(dense.spectrum[a]).epsilon(1e-6));
    CHECK(whole.spectrum[a] == Approx(dense.spectrum[a]).epsilon(1e-6));
  }
  // Same axes, same signs (the sign rule is deterministic): coordinates agree closely.
  const double scale = std::sqrt(dense.spectrum[0]);
  for (std::size_t i = 0; i < dense.coords.values.size(); ++i) {
    CHECK(triangle.coords.values[i] == Approx(dense.coords.values[i]).margin(1e-4 * scale));
    CHECK(whole.coords.values[i] == Approx(dense.coords.values[i]).margin(1e-4 * scale));
  }
}
