// Neighbour graph stage benchmarks. Data come from raw files (uint64 rows, uint64 cols, then
// float32 rows) named by environment variables, so that bench/graph_compare.py can time
// scikit-learn on the very same points; without them the Swiss roll is generated here and
// the Fashion-MNIST benchmark is skipped.
//   UNFURL_BENCH_SWISS    1,000,000 x 3 Swiss roll
//   UNFURL_BENCH_FASHION  70,000 x 784 Fashion-MNIST rows
#include <benchmark/benchmark.h>

#include <algorithm>
#include <cstdint>
#include <cstdlib>
#include <fstream>
#include <string>

#include "engine/neighbours.hpp"
#include "engine/synthetic.hpp"

using namespace unfurl;

namespace {

bool load(const char* variable, PointSet& out) {
  const char* path = std::getenv(variable);
  if (!path) return false;
  std::ifstream in(path, std::ios::binary);
  std::uint64_t shape[2];
  if (!in.read(reinterpret_cast<char*>(shape), sizeof shape)) return false;
  out = PointSet(shape[0], shape[1]);
  return static_cast<bool>(in.read(reinterpret_cast<char*>(out.values.data()),
                                   static_cast<std::streamsize>(out.values.size() * 4)));
}

const PointSet& swiss() {
  static PointSet p = [] {
    PointSet q;
    return load("UNFURL_BENCH_SWISS", q) ? q : swiss_roll(1'000'000, 1).points;
  }();
  return p;
}

void run_graph(benchmark::State& state, const PointSet& points, Search search) {
  GraphOptions o;
  o.neighbourhood = NearestK{10};
  o.search = search;
  std::size_t edges = 0;
  for (auto _ : state) {
    const auto g = build_neighbour_graph(points, o);
    edges = g.summary.undirected_edges;
    benchmark::DoNotOptimize(g.graph.targets.data());
  }
  state.counters["points"] = static_cast<double>(points.rows);
  state.counters["edges"] = static_cast<double>(edges);
}

void BM_GraphSwissRoll1M(benchmark::State& state) {
  run_graph(state, swiss(), Search::tree);
}
BENCHMARK(BM_GraphSwissRoll1M)->Unit(benchmark::kSecond)->UseRealTime()->Iterations(3);

void BM_GraphFashion70k(benchmark::State& state) {
  static PointSet fashion;
  static const bool loaded = load("UNFURL_BENCH_FASHION", fashion);
  if (!loaded) {
    state.SkipWithError("UNFURL_BENCH_FASHION not set (bench/graph_compare.py makes the file)");
    for (auto _ : state) {
    }
    return;
  }
  run_graph(state, fashion, Search::scan);
}
BENCHMARK(BM_GraphFashion70k)->Unit(benchmark::kSecond)->UseRealTime()->Iterations(1);

// The scan alone on the first 10,000 Fashion-MNIST rows: a short run for comparing builds
// (for instance with and without -march=native).
void BM_ScanFashion10k(benchmark::State& state) {
  static PointSet rows;
  static const bool loaded = [] {
    PointSet all;
    if (!load("UNFURL_BENCH_FASHION", all)) return false;
    rows = PointSet(10'000, all.cols);
    std::copy_n(all.values.begin(), rows.values.size(), rows.values.begin());
    return true;
  }();
  if (!loaded) {
    state.SkipWithError("UNFURL_BENCH_FASHION not set (bench/graph_compare.py makes the file)");
    for (auto _ : state) {
    }
    return;
  }
  for (auto _ : state) {
    const auto r = exact_knn(rows, rows, {.k = 10, .search = Search::scan, .exclude_self = true});
    benchmark::DoNotOptimize(r.index.data());
  }
}
BENCHMARK(BM_ScanFashion10k)->Unit(benchmark::kSecond)->UseRealTime()->Iterations(2);

// The exact kNN query alone (no duplicates pass, no CSR) on a 3-D set, k-d tree.
void BM_ExactKnn3d(benchmark::State& state) {
  static const PointSet points = swiss_roll(100'000, 2).points;
  const Search search = Search::tree;
  for (auto _ : state) {
    const auto r = exact_knn(points, points, {.k = 10, .search = search, .exclude_self = true});
    benchmark::DoNotOptimize(r.index.data());
  }
  state.SetLabel(search_name(search));
}
BENCHMARK(BM_ExactKnn3d)
    ->Arg(0)
    ->Arg(1)
    ->Unit(benchmark::kMillisecond)
    ->UseRealTime()
    ->Iterations(1);

}  // namespace
