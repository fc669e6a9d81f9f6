// engine/memory_estimate: the per-step estimate holds at least the arrays whose sizes are
// known exactly from the shape (analytic: an R x C float32 array takes 4 R C bytes), grows
// with every size, and saturates instead of wrapping. How close it comes to a measured peak
// is checked end to end in tests/apps/memory_guard_test.py.
#include "engine/memory_estimate.hpp"

#include <catch2/catch.hpp>

#include "engine/error.hpp"

namespace {

unfurl::MemoryShape swiss_roll_shape(std::size_t n) {
  unfurl::MemoryShape s;
  s.points = n;
  s.columns = 3;
  s.landmarks = 256;
  s.threads = 2;
  return s;
}

std::uint64_t step_bytes(const unfurl::MemoryEstimate& e, const std::string& step) {
  for (const auto& s : e.steps)
    if (s.step == step) return s.bytes;
  FAIL("no step " << step);
  return 0;
}

}  // namespace

TEST_CASE("the landmark rows step holds the L x N float32 rows", "[memory_estimate]") {
  const std::size_t n = 1000000;
  const auto e = unfurl::estimate_memory(swiss_roll_shape(n));
  const std::uint64_t rows = std::uint64_t{4} * 256 * n;
  CHECK(step_bytes(e, "rows") >= rows + e.baseline);
  // At a million points the rows dominate: the peak is a step holding them, and the rest
  // (points, graph, scores) stays below the rows themselves (common practice, no source).
  CHECK(e.peak >= rows);
  CHECK(e.peak < 2 * rows);
  CHECK(e.peak_of().largest.find("256 x N") != std::string::npos);
}

TEST_CASE("exact mode holds the N x N rows", "[memory_estimate]") {
  auto s = swiss_roll_shape(20000);
  s.exact = true;
  const auto e = unfurl::estimate_memory(s);
  CHECK(step_bytes(e, "rows") >= std::uint64_t{4} * 20000 * 20000);
  CHECK(e.peak >= unfurl::exact_mode_bytes(20000, s.spectral) / 2);
}

TEST_CASE("the Lanczos solver counts its vectors", "[memory_estimate]") {
  // Spectra's SymEigsSolver keeps a basis of ncv vectors of length n in double (its
  // documentation of ncv; from memory), and the mass estimate keeps probes x quadrature
  // float32 vectors (engine/detail/absolute_trace.hpp allocates them).
  const unfurl::SpectralOptions o;
  const std::size_t n = 10000;
  const std::size_t basis = 2 * 2 * o.deflate + 1;  // both ends, deflate pairs each
  CHECK(unfurl::spectral_solver_bytes(n, o) >= basis * n * sizeof(double));
  CHECK(unfurl::spectral_solver_bytes(n, o) >= o.probes * o.quadrature * n * sizeof(float));
  // Dense below the limit: B, its eigenvectors and a workspace, order^2 doubles each.
  CHECK(unfurl::spectral_solver_bytes(500, o) == 3 * 500 * 500 * sizeof(double));
}

TEST_CASE("the estimate grows with N, L, k and the given graph's edges", "[memory_estimate]") {
  const auto small = unfurl::estimate_memory(swiss_roll_shape(50000));
  const auto large = unfurl::estimate_memory(swiss_roll_shape(100000));
  REQUIRE(small.steps.size() == large.steps.size());
  for (std::size_t i = 0; i < small.steps.size(); ++i)
    CHECK(small.steps[i].bytes < large.steps[i].bytes);
  auto more = swiss_roll_shape(50000);
  more.landmarks = 512;
  CHECK(unfurl::estimate_memory(more).peak > small.peak);
  more = swiss_roll_shape(50000);
  more.k = 30;
  CHECK(step_bytes(unfurl::estimate_memory(more), "graph") > step_bytes(small, "graph"));

  unfurl::MemoryShape graph;
  graph.points = 50000;
  graph.graph_edges = 500000;
  const auto sparse = unfurl::estimate_memory(graph);
  graph.graph_edges = 5000000;
  // Every stored entry is 8 bytes (target and length) in each CSR alive at once.
  CHECK(unfurl::estimate_memory(graph).peak >= sparse.peak + 8 * 4500000);
  CHECK(sparse.steps.front().step == "read");
}

TEST_CASE("absurd sizes saturate instead of wrapping", "[memory_estimate]") {
  auto s = swiss_roll_shape(std::size_t{1} << 40);
  s.exact = true;
  CHECK(unfurl::estimate_memory(s).peak == UINT64_MAX);
}

TEST_CASE("a radius graph is estimated with the default k and says so", "[memory_estimate]") {
  auto s = swiss_roll_shape(10000);
  s.radius = true;
  const auto e = unfurl::estimate_memory(s);
  REQUIRE(e.notes.size() == 1);
  CHECK(e.notes[0].find("radius") != std::string::npos);
}

TEST_CASE("a shape without points or dims is refused naming the field", "[memory_estimate]") {
  unfurl::MemoryShape s;
  CHECK_THROWS_WITH(unfurl::estimate_memory(s), Catch::Contains("MemoryShape.points"));
  s.points = 10;
  s.spectral.dims = 0;
  CHECK_THROWS_WITH(unfurl::estimate_memory(s), Catch::Contains("SpectralOptions.dims"));
}
