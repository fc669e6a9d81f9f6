// Dijkstra per source and landmark picking on a ~1M-node kNN-like Swiss roll graph.
#include <benchmark/benchmark.h>
#include <omp.h>

#include <map>
#include <memory>

#include "bench/swiss_graph.hpp"
#include "engine/geodesic.hpp"
#include "engine/landmarks.hpp"

namespace {

constexpr std::size_t kNodes = 1'000'000;

const unfurl::NeighbourGraph& graph(unfurl::bench::Order order) {
  static std::map<unfurl::bench::Order, std::unique_ptr<unfurl::NeighbourGraph>> cache;
  auto& g = cache[order];
  if (!g)
    g = std::make_unique<unfurl::NeighbourGraph>(unfurl::bench::swiss_knn_graph(kNodes, 10, order));
  return *g;
}

// Arguments: node order (0 random, 1 spatial), threads. Each iteration runs one source per
// thread, so the time per iteration is the time per source per thread.
void BM_DijkstraPerSource(benchmark::State& state) {
  const auto order = state.range(0) ? unfurl::bench::Order::spatial : unfurl::bench::Order::random;
  const auto threads = static_cast<int>(state.range(1));
  const auto& g = graph(order);
  omp_set_num_threads(threads);
  std::vector<unfurl::NodeId> sources(static_cast<std::size_t>(threads));
  unfurl::NodeId next = 12345;
  double sink = 0.0;
  for (auto _ : state) {
    for (auto& s : sources) s = (next += 104729) % kNodes;
    const auto rows = unfurl::geodesic_rows(g, {sources}).rows;
    sink += rows.values[rows.values.size() / 2];
  }
  benchmark::DoNotOptimize(sink);
  state.counters["edges"] = static_cast<double>(g.directed_edges());
  state.SetLabel(order == unfurl::bench::Order::spatial ? "spatial order" : "random order");
}
BENCHMARK(BM_DijkstraPerSource)
    ->Args({0, 1})
    ->Args({1, 1})
    ->Args({0, 2})
    ->Args({1, 2})
    ->Unit(benchmark::kMillisecond)
    ->UseRealTime()
    ->MinTime(3.0);

// Arguments: pick (0 maxmin, 1 random), landmarks; 2 threads, spatial order. The ratio
// maxmin / random is the cost of the sequential greedy choice on top of the rows.
void BM_LandmarkPick(benchmark::State& state) {
  const auto& g = graph(unfurl::bench::Order::spatial);
  omp_set_num_threads(2);
  unfurl::LandmarkOptions o;
  o.pick = state.range(0) ? unfurl::Pick::random : unfurl::Pick::maxmin;
  o.count = unfurl::LandmarkCount{static_cast<std::size_t>(state.range(1))};
  double sink = 0.0;
  for (auto _ : state) {
    const auto r = unfurl::pick_landmarks(g, o);
    sink += r.rows.values.back();
    state.counters["choice_visits"] = static_cast<double>(r.summary.choice_visits);
  }
  benchmark::DoNotOptimize(sink);
  state.SetLabel(o.pick == unfurl::Pick::maxmin ? "maxmin" : "random");
}
BENCHMARK(BM_LandmarkPick)->Args({0, 32})->Args({1, 32})->Unit(benchmark::kSecond)->Iterations(1);

}  // namespace
