// Landmark MDS triangulation at N = 1M, L = 256; exact mode at N = 10,000; the landmark
// embedding at N = 20,000, L = 500.
#include <benchmark/benchmark.h>
#include <omp.h>

#include "bench/swiss_graph.hpp"
#include "engine/geodesic.hpp"
#include "engine/landmarks.hpp"
#include "engine/spectral.hpp"

namespace {

// L x N Euclidean distance rows from L random points of an N-point Swiss roll: the spectral
// stage's cost depends on the sizes, not on where the distances come from.
unfurl::DistanceRows euclidean_landmark_rows(std::size_t n, std::size_t l) {
  const auto p = unfurl::swiss_roll(n, 3).points;
  unfurl::DistanceRows r;
  r.rows = l;
  r.cols = n;
  unfurl::Random rng(4);
  for (std::size_t k = 0; k < l; ++k)
    r.sources.push_back(static_cast<unfurl::NodeId>(rng.below(n)));
  r.values.resize(l * n);
#pragma omp parallel for schedule(static)
  for (std::ptrdiff_t k = 0; k < static_cast<std::ptrdiff_t>(l); ++k) {
    const float* a = p.row(r.sources[static_cast<std::size_t>(k)]);
    float* out = r.row(static_cast<std::size_t>(k));
    for (std::size_t j = 0; j < n; ++j) {
      const float* b = p.row(j);
      out[j] = std::sqrt((a[0] - b[0]) * (a[0] - b[0]) + (a[1] - b[1]) * (a[1] - b[1]) +
                         (a[2] - b[2]) * (a[2] - b[2]));
    }
  }
  return r;
}

void BM_LandmarkMds(benchmark::State& state) {
  const auto n = static_cast<std::size_t>(state.range(0));
  const auto l = static_cast<std::size_t>(state.range(1));
  omp_set_num_threads(static_cast<int>(state.range(2)));
  static unfurl::DistanceRows rows;
  if (rows.cols != n || rows.rows != l) rows = euclidean_landmark_rows(n, l);
  unfurl::SpectralOptions o;
  float sink = 0.0f;
  for (auto _ : state) sink += unfurl::landmark_mds(rows, o).coords.values.back();
  benchmark::DoNotOptimize(sink);
}
BENCHMARK(BM_LandmarkMds)
    ->Args({1'000'000, 256, 1})
    ->Args({1'000'000, 256, 2})
    ->Unit(benchmark::kMillisecond)
    ->UseRealTime()
    ->MinTime(3.0);

const unfurl::DistanceRows& exact_rows_10k() {
  static const unfurl::DistanceRows rows = [] {
    omp_set_num_threads(2);
    return unfurl::geodesic_rows(
               unfurl::bench::swiss_knn_graph(10'000, 10, unfurl::bench::Order::spatial),
               {unfurl::EveryNode{}})
        .rows;
  }();
  return rows;
}

// Exact mode at N = 10,000 (Swiss roll, k = 10): all N geodesic rows, 2 threads.
void BM_ExactGeodesicRows(benchmark::State& state) {
  const auto g = unfurl::bench::swiss_knn_graph(10'000, 10, unfurl::bench::Order::spatial);
  omp_set_num_threads(2);
  float sink = 0.0f;
  for (auto _ : state) sink += unfurl::geodesic_rows(g, {unfurl::EveryNode{}}).rows.values.back();
  benchmark::DoNotOptimize(sink);
}
BENCHMARK(BM_ExactGeodesicRows)->Unit(benchmark::kSecond)->UseRealTime()->Iterations(2);

// Exact-mode spectral stage at N = 10,000; argument: negative_end (0 or 1), 2 threads.
void BM_ExactSpectral(benchmark::State& state) {
  const auto& rows = exact_rows_10k();
  omp_set_num_threads(2);
  unfurl::SpectralOptions o;
  o.negative_end = state.range(0) != 0;
  float sink = 0.0f;
  for (auto _ : state) {
    const auto r = unfurl::exact_mds(rows, o);
    sink += r.coords.values.back();
    state.counters["operations"] = static_cast<double>(r.summary.operations);
  }
  benchmark::DoNotOptimize(sink);
}
BENCHMARK(BM_ExactSpectral)->Arg(0)->Arg(1)->Unit(benchmark::kSecond)->UseRealTime()->Iterations(2);

// Landmark embedding at N = 20,000, L = 500 (maxmin rows plus landmark MDS), 2 threads.
void BM_LandmarkEmbed20k(benchmark::State& state) {
  const auto g = unfurl::bench::swiss_knn_graph(20'000, 10, unfurl::bench::Order::spatial);
  omp_set_num_threads(2);
  unfurl::LandmarkOptions lo;
  lo.count = unfurl::LandmarkCount{500};
  float sink = 0.0f;
  for (auto _ : state) {
    const auto picked = unfurl::pick_landmarks(g, lo);
    sink += unfurl::landmark_mds(picked.rows, {}).coords.values.back();
  }
  benchmark::DoNotOptimize(sink);
}
BENCHMARK(BM_LandmarkEmbed20k)->Unit(benchmark::kMillisecond)->UseRealTime()->Iterations(3);

}  // namespace
