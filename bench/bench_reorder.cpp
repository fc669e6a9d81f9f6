// Which node order helps shortest paths most: Dijkstra (binary heap, one thread) from fixed
// sources over the 1,000,000-point Swiss roll kNN graph (k = 10), renumbered each way. The
// Dijkstra here is a plain textbook one, only to measure memory locality; the project's
// geodesic stage lives elsewhere.
#include <benchmark/benchmark.h>

#include <functional>
#include <limits>
#include <queue>

#include "engine/neighbours.hpp"
#include "engine/reorder.hpp"
#include "engine/synthetic.hpp"

using namespace unfurl;

namespace {

struct Prepared {
  PointSet points;
  NeighbourGraph graph;
};

const Prepared& prepared() {
  static const Prepared p = [] {
    Prepared q;
    q.points = swiss_roll(1'000'000, 1).points;
    GraphOptions o;
    o.neighbourhood = NearestK{10};
    q.graph = build_neighbour_graph(q.points, o).graph;  // no duplicates: nodes are rows
    return q;
  }();
  return p;
}

double dijkstra_sum(const NeighbourGraph& g, NodeId source, std::vector<float>& dist) {
  dist.assign(g.nodes(), std::numeric_limits<float>::infinity());
  using Item = std::pair<float, NodeId>;
  std::priority_queue<Item, std::vector<Item>, std::greater<>> heap;
  dist[source] = 0.0f;
  heap.push({0.0f, source});
  while (!heap.empty()) {
    const auto [d, v] = heap.top();
    heap.pop();
    if (d > dist[v]) continue;
    for (auto e = g.offsets[v]; e < g.offsets[v + 1]; ++e) {
      const NodeId w = g.targets[static_cast<std::size_t>(e)];
      const float nd = d + g.lengths[static_cast<std::size_t>(e)];
      if (nd < dist[w]) dist[w] = nd, heap.push({nd, w});
    }
  }
  double sum = 0.0;
  for (float x : dist) sum += x;
  return sum;
}

void BM_DijkstraNodeOrder(benchmark::State& state) {
  const auto order = static_cast<NodeOrder>(state.range(0));
  const Prepared& p = prepared();
  const Renumbering r = node_order(order, p.graph, p.points);
  const NeighbourGraph g = renumber(p.graph, r);
  std::vector<float> dist;
  // The same three input rows as sources in every order.
  const NodeId sources[] = {0, 333'333, 999'999};
  double sink = 0.0;
  for (auto _ : state)
    for (NodeId s : sources) sink += dijkstra_sum(g, r.new_of_old[s], dist);
  benchmark::DoNotOptimize(sink);
  state.SetLabel(node_order_name(order));
  state.counters["s_per_source"] = benchmark::Counter(
      3.0, benchmark::Counter::kIsIterationInvariantRate | benchmark::Counter::kInvert);
}
BENCHMARK(BM_DijkstraNodeOrder)
    ->DenseRange(0, 3)
    ->Unit(benchmark::kSecond)
    ->UseRealTime()
    ->Iterations(2);

void BM_NodeOrderCost(benchmark::State& state) {
  const auto order = static_cast<NodeOrder>(state.range(0));
  const Prepared& p = prepared();
  for (auto _ : state) {
    const auto r = node_order(order, p.graph, p.points);
    benchmark::DoNotOptimize(renumber(p.graph, r).targets.data());
  }
  state.SetLabel(node_order_name(order));
}
BENCHMARK(BM_NodeOrderCost)
    ->DenseRange(1, 3)
    ->Unit(benchmark::kSecond)
    ->UseRealTime()
    ->Iterations(1);

}  // namespace
