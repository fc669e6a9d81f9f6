// The whole spectrum's masses (exact, or estimated by stochastic Lanczos quadrature) and the
// eigenvalue noise floor of engine/spectral.*.
#include <omp.h>

#include <Spectra/MatOp/DenseSymMatProd.h>

#include <Eigen/Dense>
#include <algorithm>
#include <catch2/catch.hpp>
#include <cmath>
#include <numeric>

#include "engine/detail/absolute_trace.hpp"
#include "engine/detail/centred_operator.hpp"
#include "engine/geodesic.hpp"
#include "engine/neighbours.hpp"
#include "engine/random.hpp"
#include "engine/spectral.hpp"
#include "engine/synthetic.hpp"
#include "tests/test_util.hpp"

using unfurl::NodeId;

namespace {

std::vector<NodeId> every(std::size_t n) {
  std::vector<NodeId> ids(n);
  std::iota(ids.begin(), ids.end(), NodeId{0});
  return ids;
}

// Every eigenvalue of B = -1/2 J S J by Eigen's dense solver (the outside reference here:
// Eigen's SelfAdjointEigenSolver, a general-purpose library), and its masses.
struct Whole {
  Eigen::VectorXd values;
  double positive = 0, negative = 0;
};

// B = -1/2 J S J with S_ij = (D_ij^2 + D_ji^2) / 2, built whole.
Eigen::MatrixXd dense_b(const unfurl::DistanceRows& d) {
  const auto n = static_cast<Eigen::Index>(d.rows);
  Eigen::MatrixXd s(n, n);
  for (Eigen::Index i = 0; i < n; ++i)
    for (Eigen::Index j = 0; j < n; ++j) {
      const double a = d.row(static_cast<std::size_t>(i))[j];
      const double b = d.row(static_cast<std::size_t>(j))[i];
      s(i, j) = 0.5 * (a * a + b * b);
    }
  const Eigen::MatrixXd centre =
      Eigen::MatrixXd::Identity(n, n) - Eigen::MatrixXd::Constant(n, n, 1.0 / double(n));
  return -0.5 * centre * s * centre;
}

Whole whole_spectrum(const unfurl::DistanceRows& rows) {
  Whole w;
  w.values = Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd>(dense_b(rows)).eigenvalues();
  for (double v : w.values) (v > 0 ? w.positive : w.negative) += std::abs(v);
  return w;
}

unfurl::DistanceRows roll_geodesics(std::size_t n, std::uint64_t seed) {
  const auto roll = unfurl::swiss_roll(n, seed);
  unfurl::GraphOptions go;
  go.neighbourhood = unfurl::NearestK{10};
  const auto graph = unfurl::build_neighbour_graph(roll.points, go);
  return unfurl::geodesic_rows(graph.graph, {unfurl::EveryNode{}}).rows;
}

// A random n x n table of non-negative floats; symmetric with a zero diagonal (the layout
// exact mode's all-pairs geodesics have) or, when asked, slightly asymmetric.
unfurl::DistanceRows random_table(std::size_t n, bool symmetric, std::uint64_t seed) {
  unfurl::DistanceRows d;
  d.rows = d.cols = n;
  d.sources.resize(n);
  std::iota(d.sources.begin(), d.sources.end(), unfurl::NodeId{0});
  d.values.assign(n * n, 0.0f);
  unfurl::Random rng(seed);
  auto uniform = [&] { return static_cast<double>(rng.next() >> 11) * 0x1.0p-53; };
  for (std::size_t i = 0; i < n; ++i)
    for (std::size_t j = i + 1; j < n; ++j) {
      const auto v = static_cast<float>(1.0 + 9.0 * uniform());
      d.row(i)[j] = v;
      d.row(j)[i] = symmetric ? v : v * static_cast<float>(1.0 + 1e-3 * uniform());
    }
  return d;
}

Eigen::MatrixXd random_block(std::size_t n, std::size_t k, std::uint64_t seed) {
  unfurl::Random rng(seed);
  Eigen::MatrixXd x(static_cast<Eigen::Index>(n), static_cast<Eigen::Index>(k));
  for (Eigen::Index c = 0; c < x.cols(); ++c)
    for (Eigen::Index i = 0; i < x.rows(); ++i)
      x(i, c) = static_cast<double>(rng.next() >> 11) * 0x1.0p-52 - 1.0;
  return x;
}

Eigen::MatrixXd block_product(const unfurl::detail::CentredSquaredOperator& op,
                              const Eigen::MatrixXd& x) {
  Eigen::MatrixXd y(x.rows(), x.cols());
  op.perform_block(x.data(), y.data(), static_cast<std::size_t>(x.cols()));
  return y;
}

}  // namespace

TEST_CASE("stochastic Lanczos quadrature estimates trace(|A|) of a known spectrum", "[spectral]") {
  // A = Q diag(lambda) Q' with a known spectrum: trace(|A|) = sum |lambda| exactly
  // (Hutchinson 1989; Ubaru, Chen and Saad 2017). Deflating known pairs adds their |lambda|
  // exactly and leaves the rest to the probes.
  const Eigen::Index n = 300;
  unfurl::Random rng(5);
  Eigen::MatrixXd g(n, n);
  for (Eigen::Index i = 0; i < g.size(); ++i) g.data()[i] = rng.normal();
  const Eigen::MatrixXd q = Eigen::HouseholderQR<Eigen::MatrixXd>(g).householderQ();
  Eigen::VectorXd lambda(n);
  double want = 0;
  for (Eigen::Index i = 0; i < n; ++i) {
    lambda[i] = (i % 3 == 0 ? -1.0 : 1.0) * (1.0 + 0.01 * double(i));
    want += std::abs(lambda[i]);
  }
  lambda[0] = 500.0;  // one dominant eigenvalue, deflated below
  want += 500.0 - 1.0;
  const Eigen::MatrixXd a = q * lambda.asDiagonal() * q.transpose();
  Spectra::DenseSymMatProd<double> op(a);
  const auto deflated = unfurl::detail::absolute_trace(op, q.leftCols(1), {500.0}, 16, 40, 3);
  CHECK(std::abs(deflated.value - want) < 4 * deflated.standard_error + 0.01 * want);
  CHECK(deflated.standard_error < 0.02 * want);
  // Without the deflation the dominant eigenvalue makes the spread of the probes larger.
  const auto plain = unfurl::detail::absolute_trace(op, Eigen::MatrixXd(n, 0), {}, 16, 40, 3);
  CHECK(plain.standard_error > deflated.standard_error);
  // The same seed gives the same estimate; the probes are drawn from the seed alone.
  const auto again = unfurl::detail::absolute_trace(op, q.leftCols(1), {500.0}, 16, 40, 3);
  CHECK(again.value == deflated.value);
}

TEST_CASE("the non-Euclidean ratio and masses come from the whole spectrum, dense or Lanczos",
          "[spectral]") {
  // Swiss roll geodesics (DESIGN.md section 6) are far from Euclidean in the tail of the
  // spectrum: hundreds of small negative eigenvalues that the top few pairs do not show.
  const auto rows = roll_geodesics(500, 21);
  const Whole want = whole_spectrum(rows);
  unfurl::SpectralOptions o;
  o.dims = 2;
  const auto dense = unfurl::exact_mds(rows, o);
  REQUIRE(dense.mass.exact);
  CHECK(dense.mass.positive == Approx(want.positive).epsilon(1e-6));
  CHECK(dense.mass.negative == Approx(want.negative).epsilon(1e-6));
  CHECK(dense.negative_ratio == Approx(want.negative / want.positive).epsilon(1e-6));
  o.dense_limit = 100;  // the Lanczos path on the same matrix
  const auto lanczos = unfurl::exact_mds(rows, o);
  REQUIRE(!lanczos.mass.exact);
  REQUIRE(!lanczos.summary.spectrum_complete);
  CHECK(lanczos.mass.trace == Approx(want.positive - want.negative).epsilon(1e-9));
  const double ratio = want.negative / want.positive;
  CHECK(std::abs(lanczos.negative_ratio - ratio) < 0.05 * ratio);
  CHECK(lanczos.mass.ratio_error() > 0);
  CHECK(lanczos.mass.ratio_error() < 0.05 * ratio);
  // The computed eigenvalues alone would read far lower: the estimate is not their sum.
  double listed = 0;
  for (double v : lanczos.spectrum)
    if (v < 0) listed -= v;
  CHECK(listed < 0.8 * want.negative);
}

TEST_CASE("without the mass estimate the Lanczos path computes no masses and the same map",
          "[spectral]") {
  // Reference: every eigenvalue of B from Eigen's dense solver (as above).
  const auto rows = roll_geodesics(500, 21);
  const Whole want = whole_spectrum(rows);
  unfurl::SpectralOptions o;
  o.dense_limit = 100;
  const auto with = unfurl::exact_mds(rows, o);
  o.mass = false;
  const auto without = unfurl::exact_mds(rows, o);
  CHECK(with.mass.computed);
  REQUIRE(!without.mass.computed);
  CHECK(without.summary.operations_mass == 0);
  CHECK(without.summary.operations < with.summary.operations);  // dims pairs, not deflate
  CHECK(without.mass.positive == 0);  // nothing filled in that could pass for a figure
  CHECK(without.mass.trace == Approx(want.positive - want.negative).epsilon(1e-9));
  const Eigen::Index n = want.values.size();
  for (Eigen::Index k = 0; k < 2; ++k)  // ascending in Eigen: the top pairs are last
    CHECK(without.spectrum[static_cast<std::size_t>(k)] ==
          Approx(want.values[n - 1 - k]).epsilon(1e-9));
  REQUIRE(without.coords.values.size() == with.coords.values.size());
  double largest = 0, moved = 0;
  for (std::size_t i = 0; i < with.coords.values.size(); ++i) {
    largest = std::max(largest, double(std::abs(with.coords.values[i])));
    moved = std::max(moved, double(std::abs(with.coords.values[i] - without.coords.values[i])));
  }
  CHECK(moved <= 1e-5 * largest);
  // The dense solver has the whole spectrum anyway: its masses stay exact.
  o.dense_limit = 1000;
  const auto dense = unfurl::exact_mds(rows, o);
  CHECK(dense.mass.computed);
  CHECK(dense.mass.exact);
}

TEST_CASE("the estimated masses do not depend on the thread count", "[spectral]") {
  const auto rows = roll_geodesics(300, 22);
  unfurl::SpectralOptions o;
  o.dense_limit = 100;
  const int threads = omp_get_max_threads();
  omp_set_num_threads(1);
  const auto one = unfurl::exact_mds(rows, o);
  omp_set_num_threads(2);
  const auto two = unfurl::exact_mds(rows, o);
  omp_set_num_threads(threads);
  CHECK(one.mass.positive == two.mass.positive);
  CHECK(one.mass.negative == two.mass.negative);
  CHECK(one.mass.standard_error == two.mass.standard_error);
}

TEST_CASE("an axis below the float32 noise floor is named, a real one is not", "[spectral]") {
  // Euclidean distances of a flat grid: B has rank 2 exactly (Schoenberg 1935), so a third
  // eigenvalue is rounding alone and must fall below the floor; a Swiss roll's second axis
  // (its height, 21 units) stands far above it.
  unfurl::PointSet grid(144, 3);
  for (std::size_t i = 0; i < 144; ++i) {
    grid.row(i)[0] = static_cast<float>(i % 12);
    grid.row(i)[1] = static_cast<float>(i / 12);
    grid.row(i)[2] = 0.0f;
  }
  unfurl::SpectralOptions o;
  o.dims = 3;
  const auto flat = unfurl::exact_mds(unfurl::test::euclidean_rows(grid, every(144)), o);
  CHECK(flat.summary.noise_floor > 0);
  CHECK(flat.summary.noise_axes == std::vector<std::size_t>{3});
  CHECK(!flat.summary.warnings.empty());
  o.dims = 2;
  const auto roll = unfurl::exact_mds(roll_geodesics(400, 23), o);
  CHECK(roll.summary.noise_axes.empty());
  CHECK(roll.spectrum[1] > 100 * roll.summary.noise_floor);
}

TEST_CASE("an axis beyond the positive part of the spectrum is named, warned about and 0",
          "[spectral]") {
  // Hand-derived: the 5-cycle's squared geodesics form the circulant with first row
  // (0, 1, 4, 4, 1); its eigenvalues are 10 and, for k = 1..4, 2 cos(2 pi k / 5) + 8 cos(4 pi
  // k / 5): -5.854 (k = 1, 4) and 0.854 (k = 2, 3). B = -1/2 J S J keeps the k != 0 ones
  // times -1/2 and puts 0 on the constant vector: 2.927, 2.927, 0, -0.427, -0.427.
  const auto g = unfurl::test::graph_from_edges(
      5, {{0, 1, 1.f}, {1, 2, 1.f}, {2, 3, 1.f}, {3, 4, 1.f}, {4, 0, 1.f}});
  unfurl::SpectralOptions o;
  o.dims = 4;
  const auto r = unfurl::exact_mds(unfurl::geodesic_rows(g, {unfurl::EveryNode{}}).rows, o);
  REQUIRE(r.spectrum.size() == 5);
  CHECK(r.spectrum[0] == Approx(2.927051).epsilon(1e-5));
  CHECK(r.spectrum[3] == Approx(-0.427051).epsilon(1e-5));
  CHECK(r.summary.noise_axes == std::vector<std::size_t>{3, 4});
  for (std::size_t i = 0; i < 5; ++i) CHECK(r.coords.row(i)[3] == 0.0f);
  REQUIRE(r.summary.warnings.size() == 2);
  CHECK_THAT(r.summary.warnings[1], Catch::Contains("axis 4 carries no structure and is set to 0"));
  CHECK_THAT(r.summary.warnings[1], Catch::Contains("beyond the positive part"));
}

// The implicit exact-mode operator (engine/detail/centred_operator.*) against the dense B above
// multiplied by Eigen, for one vector and for blocks of several, on random distance tables.
TEST_CASE("the implicit centred operator's block product equals the dense B times X",
          "[spectral]") {
  for (const bool symmetric : {true, false}) {
    for (const std::size_t n : {1u, 7u, 1000u}) {
      const auto d = random_table(n, symmetric, 40 + n);
      const Eigen::MatrixXd b = dense_b(d);
      const unfurl::detail::CentredSquaredOperator op(d, {});
      // Scale of the entries of B X: |B| |X|, bounded by n max S max |x|.
      const double scale = static_cast<double>(n) * 100.0 + 1.0;
      for (const std::size_t k : {1u, 3u, 16u}) {
        INFO("n " << n << ", k " << k << (symmetric ? ", symmetric" : ", asymmetric"));
        const Eigen::MatrixXd x = random_block(n, k, 7 * n + k);
        const Eigen::MatrixXd want = b * x;
        const Eigen::MatrixXd got = block_product(op, x);
        CHECK((got - want).cwiseAbs().maxCoeff() <= 1e-12 * scale);
        // The one-vector product (the eigen solver's) agrees with each column of the block.
        for (Eigen::Index c = 0; c < x.cols(); ++c) {
          Eigen::VectorXd one(x.rows());
          op.perform_op(x.col(c).data(), one.data());
          CHECK((one - got.col(c)).cwiseAbs().maxCoeff() <= 1e-12 * scale);
        }
      }
    }
  }
}

TEST_CASE("the implicit centred operator's block product does not depend on the thread count",
          "[spectral]") {
  const auto d = random_table(600, true, 9);
  const Eigen::MatrixXd x = random_block(600, 16, 10);
  const int threads = omp_get_max_threads();
  omp_set_num_threads(1);
  const unfurl::detail::CentredSquaredOperator op1(d, {});
  const Eigen::MatrixXd one = block_product(op1, x);
  omp_set_num_threads(2);
  const unfurl::detail::CentredSquaredOperator op2(d, {});
  const Eigen::MatrixXd two = block_product(op2, x);
  omp_set_num_threads(threads);
  CHECK((one.array() == two.array()).all());
}
