// Quality scores at scale: sampled scoring of 1,000,000 points (target: <= 10 s on 2 cores),
// exact scoring of 20,000 (compared with scikit-learn by bench/quality_vs_sklearn.py), and the
// residual variance curve over landmark rows. Maps: the Swiss roll's isometric ground truth,
// exactly (a near-perfect map) or with Gaussian noise of a few neighbour spacings (local
// errors, so many misplaced neighbours need a counting pass). CPU time is the whole process
// (all threads), the figure that matters on a shared machine where wall time is noisy.
#include <benchmark/benchmark.h>

#include <map>
#include <utility>

#include "engine/quality.hpp"
#include "engine/quality_residual.hpp"
#include "engine/random.hpp"
#include "engine/synthetic.hpp"

namespace {

using namespace unfurl;

struct Case {
  SyntheticSet roll;
  PointSet map;
};

// Built once per (N, noise in thousandths), outside the timed loops.
const Case& roll_case(std::size_t n, int noise_milli) {
  static std::map<std::pair<std::size_t, int>, Case> cache;
  auto it = cache.find({n, noise_milli});
  if (it == cache.end()) {
    Case c{swiss_roll(n, 1), {}};
    c.map = c.roll.truth;
    Random rng(2);
    for (float& v : c.map.values) v += static_cast<float>(noise_milli * 1e-3 * rng.normal());
    it = cache.emplace(std::make_pair(n, noise_milli), std::move(c)).first;
  }
  return it->second;
}

void report(benchmark::State& state, const NeighbourhoodScores& r) {
  state.counters["T"] = r.by_k[0].trustworthiness;
  state.counters["T_half_width"] = (r.by_k[0].t_high - r.by_k[0].t_low) / 2;
  state.counters["C"] = r.by_k[0].continuity;
  state.counters["queries"] = static_cast<double>(r.queries);
}

// Args: N, map noise (thousandths of a unit), threads.
void run_scores(benchmark::State& state, ScoreMethod method) {
  const Case& c = roll_case(static_cast<std::size_t>(state.range(0)), state.range(1));
  QualityOptions o;
  o.ks = {12};
  o.method = method;
  o.sample = 2000;
  o.threads = static_cast<int>(state.range(2));
  NeighbourhoodScores r;
  for (auto _ : state) {
    r = neighbourhood_scores(c.roll.points, c.map, o);
    benchmark::DoNotOptimize(r.by_k.data());
  }
  report(state, r);
}

void BM_SampledScores(benchmark::State& state) {
  run_scores(state, ScoreMethod::sampled);
}
BENCHMARK(BM_SampledScores)
    ->ArgNames({"N", "noise_milli", "threads"})
    ->Args({1000000, 0, 2})
    ->Args({1000000, 100, 2})
    ->Args({1000000, 100, 1})
    ->Unit(benchmark::kSecond)
    ->MeasureProcessCPUTime()
    ->UseRealTime()
    ->Iterations(1);

void BM_ExactScores(benchmark::State& state) {
  run_scores(state, ScoreMethod::exact);
}
BENCHMARK(BM_ExactScores)
    ->ArgNames({"N", "noise_milli", "threads"})
    ->Args({20000, 0, 2})
    ->Args({20000, 500, 2})
    ->Args({20000, 500, 1})
    ->Unit(benchmark::kSecond)
    ->MeasureProcessCPUTime()
    ->UseRealTime()
    ->Iterations(1);

// Residual variance over 200 landmark rows of a 1,000,000-point map (Euclidean rows stand in
// for geodesic ones: only the pass over the pairs is timed).
void BM_ResidualVariance(benchmark::State& state) {
  const Case& c = roll_case(static_cast<std::size_t>(state.range(0)), 0);
  DistanceRows rows;
  rows.rows = static_cast<std::size_t>(state.range(1));
  rows.cols = c.map.rows;
  rows.values.resize(rows.rows * rows.cols);
  for (std::size_t r = 0; r < rows.rows; ++r) {
    rows.sources.push_back(static_cast<NodeId>(r * 4999 % rows.cols));
    const float* s = c.roll.points.row(rows.sources.back());
    for (std::size_t j = 0; j < rows.cols; ++j) {
      const float* p = c.roll.points.row(j);
      double d2 = 0;
      for (int k = 0; k < 3; ++k) d2 += (double(s[k]) - p[k]) * (double(s[k]) - p[k]);
      rows.row(r)[j] = static_cast<float>(std::sqrt(d2));
    }
  }
  ResidualVarianceCurve curve;
  for (auto _ : state) {
    curve = residual_variance(rows, c.map);
    benchmark::DoNotOptimize(curve.by_dims.data());
  }
  state.counters["pairs"] = static_cast<double>(curve.pairs);
  state.counters["rv_2d"] = curve.by_dims[1];
}
BENCHMARK(BM_ResidualVariance)
    ->ArgNames({"N", "rows"})
    ->Args({1000000, 200})
    ->Unit(benchmark::kSecond)
    ->MeasureProcessCPUTime()
    ->UseRealTime()
    ->Iterations(1);

}  // namespace
