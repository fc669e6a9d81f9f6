#include "engine/step_store.hpp"

#include <atomic>
#include <catch2/catch.hpp>
#include <map>

#include "engine/embedding.hpp"
#include "engine/error.hpp"
#include "engine/synthetic.hpp"

using namespace unfurl;

namespace {

// A store in memory that counts what it gives back, and can ask the run to stop after it has
// saved a given number of row batches (as a signal would).
class MemoryStore final : public StepStore {
 public:
  std::optional<NodeGraph> graph;
  std::optional<LandmarkResult> landmarks;
  std::map<std::size_t, std::vector<float>> batches;
  std::size_t loads = 0;
  std::size_t stop_after_batches = 0;  // 0: never
  std::atomic<bool> stop{false};

  std::optional<NodeGraph> load_graph() override {
    if (graph) ++loads, ++graph_loads;
    return graph;
  }
  void save_graph(const NodeGraph& g) override {
    graph = g;
    graph->node_points = PointSet{};  // the contract: the caller gathers them again
  }
  std::optional<NodesStep> nodes;
  std::size_t graph_loads = 0;
  std::optional<NodesStep> load_nodes() override {
    if (nodes) ++loads;
    return nodes;
  }
  void save_nodes(const NodesStep& n) override { nodes = n; }
  std::optional<LandmarkResult> load_landmarks() override {
    if (landmarks) ++loads;
    return landmarks;
  }
  void save_landmarks(const LandmarkResult& c) override { landmarks = c; }
  bool load_rows(std::size_t b, DistanceRows& rows, std::size_t first, std::size_t n) override {
    auto it = batches.find(b);
    if (it == batches.end()) return false;
    REQUIRE(it->second.size() == n * rows.cols);
    std::copy(it->second.begin(), it->second.end(), rows.row(first));
    ++loads;
    return true;
  }
  void save_rows(std::size_t b, const DistanceRows& rows, std::size_t first,
                 std::size_t n) override {
    batches[b].assign(rows.row(first), rows.row(first) + n * rows.cols);
    if (stop_after_batches && batches.size() >= stop_after_batches) stop = true;
  }
  std::map<std::size_t, DistanceRows> residual_batches;
  std::size_t residual_loads = 0;
  std::size_t residual_saves = 0;
  std::optional<std::size_t> damaged_residual;  // kept, but found damaged when loaded
  bool has_residual_rows(std::size_t b) override { return residual_batches.count(b) > 0; }
  bool load_residual_rows(std::size_t b, DistanceRows& rows) override {
    auto it = residual_batches.find(b);
    if (it == residual_batches.end() || damaged_residual == b) return false;
    REQUIRE(it->second.sources == rows.sources);
    rows = it->second;
    ++residual_loads;
    return true;
  }
  void save_residual_rows(std::size_t b, const DistanceRows& rows) override {
    residual_batches[b] = rows;
    ++residual_saves;
    if (damaged_residual == b) damaged_residual.reset();
  }
  std::optional<MapStep> map;
  std::optional<ResidualVarianceCurve> residual;
  std::optional<Assessment> scores;
  std::optional<MapStep> load_map() override {
    if (map) ++loads;
    return map;
  }
  void save_map(const MapStep& m) override { map = m; }
  std::optional<ResidualVarianceCurve> load_residual() override {
    if (residual) ++loads;
    return residual;
  }
  void save_residual(const ResidualVarianceCurve& c) override { residual = c; }
  std::optional<Assessment> load_scores() override { return scores; }
  void save_scores(const Assessment& a) override { scores = a; }
};

void same_result(const EmbedResult& a, const EmbedResult& b) {
  CHECK(a.coords.values == b.coords.values);
  CHECK(a.rows == b.rows);
  CHECK(a.landmark_rows == b.landmark_rows);
  CHECK(a.landmark_coords == b.landmark_coords);
  CHECK(a.spectrum == b.spectrum);
  CHECK(a.geodesic.values == b.geodesic.values);
  CHECK(a.landmarks.coverage_radius == b.landmarks.coverage_radius);
  CHECK(a.graph->undirected_edges == b.graph->undirected_edges);
}

}  // namespace

TEST_CASE("a run with a step store, stopped and resumed, equals a run without", "[resume]") {
  // The reference is the store-less pipeline (the engine's one-pass path, itself checked
  // against scikit-learn's Isomap in tests/reference); the Swiss roll is DESIGN.md's.
  const PointSet points = swiss_roll(3000, 4).points;
  EmbedOptions o;
  o.graph.neighbourhood = NearestK{8};
  o.landmarks.count = LandmarkCount{40};
  o.keep_geodesics = true;
  const EmbedResult plain = embed_points(points, o);

  MemoryStore store;
  store.stop_after_batches = 5;
  CHECK_THROWS_AS(embed_points(points, o, StopToken{&store.stop}, &store), InterruptedError);
  CHECK(store.graph.has_value());
  CHECK(store.landmarks.has_value());
  // Rows run beside the choice: batches done by then are saved with it, and rows running
  // when the stop came still finish their batches.
  const std::size_t saved = store.batches.size();
  CHECK(saved >= 5);

  store.stop = false;
  store.stop_after_batches = 0;
  const EmbedResult resumed = embed_points(points, o, StopToken{&store.stop}, &store);
  CHECK(store.loads == 1 + 1 + saved);  // nodes, landmarks, the saved batches
  CHECK(store.graph_loads == 0);        // the nodes step stands in for the graph
  CHECK(store.batches.size() == 14);    // 40 rows in batches of ceil(40 / 16) = 3
  same_result(resumed, plain);

  store.loads = 0;
  const EmbedResult again = embed_points(points, o, {}, &store);
  CHECK(store.loads == 1 + 1 + 14 + 1);  // nodes, landmarks, rows and the map taken back
  same_result(again, plain);

  // Without the nodes step (lost or damaged) it is made again from the saved graph.
  store.nodes.reset();
  store.loads = store.graph_loads = 0;
  const EmbedResult from_graph = embed_points(points, o, {}, &store);
  CHECK(store.graph_loads == 1);
  CHECK(store.nodes.has_value());
  same_result(from_graph, plain);
}

TEST_CASE("with the map and residual variance saved, a rerun reads no landmark rows", "[resume]") {
  // Landmark and exact mode; the reference is the store-less run, as above.
  const PointSet points = swiss_roll(1500, 6).points;
  for (bool exact : {false, true}) {
    EmbedOptions o;
    o.graph.neighbourhood = NearestK{8};
    o.landmarks.count = exact ? LandmarkChoice{AllLandmarks{}} : LandmarkChoice{LandmarkCount{40}};
    o.residual = ResidualOptions{.sources = 30, .seed = 3};
    const EmbedResult plain = embed_points(points, o);
    REQUIRE(plain.residual.has_value());

    MemoryStore store;
    const EmbedResult first = embed_points(points, o, {}, &store);
    REQUIRE(store.map.has_value());
    REQUIRE(store.residual.has_value());
    CHECK(store.batches.size() == (exact ? 0u : 14u));
    same_result(first, plain);

    store.loads = 0;
    const EmbedResult again = embed_points(points, o, {}, &store);
    CHECK(store.loads == 3);  // nodes, map, residual: no choice, no rows
    same_result(again, plain);
    CHECK(again.residual->by_dims == plain.residual->by_dims);
    CHECK(again.landmarks.landmarks == plain.landmarks.landmarks);
    CHECK(again.geodesic.rows == 0);  // not asked for (keep_geodesics off)

    // The rows are read back when the result must carry them.
    o.keep_geodesics = true;
    const EmbedResult with_rows = embed_points(points, o);
    store.loads = 0;
    const EmbedResult kept = embed_points(points, o, {}, &store);
    CHECK(store.loads == (exact ? 3u : 3u + 1 + 14));  // exact mode recomputes its rows
    CHECK(kept.geodesic.values == with_rows.geodesic.values);
    CHECK(kept.coords.values == plain.coords.values);
  }
}

TEST_CASE("a run stopped in the landmark rows keeps the residual variance's rows", "[resume]") {
  // The reference is the store-less run (graph_residual_variance after the map, checked in
  // tests/engine/quality_residual_test against the direct all-pairs formula).
  const PointSet points = swiss_roll(3000, 4).points;
  EmbedOptions o;
  o.graph.neighbourhood = NearestK{8};
  o.landmarks.count = LandmarkCount{40};
  o.residual = ResidualOptions{.all_pairs_limit = 500, .sources = 40, .seed = 3};  // 3 batches
  const EmbedResult plain = embed_points(points, o);
  REQUIRE(plain.residual.has_value());
  REQUIRE(plain.residual->sampled);

  MemoryStore store;
  store.stop_after_batches = 12;  // of 14 landmark row batches
  CHECK_THROWS_AS(embed_points(points, o, StopToken{&store.stop}, &store), InterruptedError);
  CHECK(store.residual_batches.size() == 3);  // made before the landmark rows
  CHECK_FALSE(store.residual.has_value());

  store.stop = false;
  store.stop_after_batches = 0;
  const EmbedResult resumed = embed_points(points, o, StopToken{&store.stop}, &store);
  CHECK(store.residual_loads == 3);
  same_result(resumed, plain);
  REQUIRE(resumed.residual.has_value());
  CHECK(resumed.residual->by_dims == plain.residual->by_dims);
  CHECK(resumed.residual->standard_error == plain.residual->standard_error);
  CHECK(resumed.residual->pairs == plain.residual->pairs);

  // A batch lost is made again before the landmark rows; one found damaged when loaded is
  // made again after the map. The same curve either way.
  for (bool lost : {true, false}) {
    if (lost)
      store.residual_batches.erase(1);
    else
      store.damaged_residual = 1;
    store.map.reset();
    store.residual.reset();
    store.residual_loads = store.residual_saves = 0;
    const EmbedResult patched = embed_points(points, o, {}, &store);
    CHECK(store.residual_loads == (lost ? 3u : 2u));
    CHECK(store.residual_saves == 1);
    CHECK(store.residual_batches.size() == 3);
    CHECK(patched.residual->by_dims == plain.residual->by_dims);
    CHECK(patched.residual->standard_error == plain.residual->standard_error);
  }
}

TEST_CASE("a given graph's nodes step is saved and taken back", "[resume]") {
  // The reference is the store-less run on the same given graph (embed_graph).
  const PointSet points = swiss_roll(1500, 9).points;
  GraphOptions go;
  go.neighbourhood = NearestK{8};
  const NodeGraph built = node_graph(points, go);
  EmbedOptions o;
  o.landmarks.count = LandmarkCount{30};
  const EmbedResult plain = embed_graph(built.graph, o);
  MemoryStore store;
  const EmbedResult first = embed_graph(built.graph, o, {}, &store);
  REQUIRE(store.nodes.has_value());
  CHECK_FALSE(store.nodes->graph.has_value());  // a given graph has no graph step
  store.map.reset();
  store.loads = 0;
  const EmbedResult again = embed_graph(built.graph, o, {}, &store);
  CHECK(store.loads == 1 + 1 + 15);  // nodes, landmarks, 30 rows in batches of ceil(30 / 16) = 2
  CHECK(again.coords.values == plain.coords.values);
  CHECK(first.coords.values == plain.coords.values);
  CHECK(again.landmark_rows == plain.landmark_rows);
  CHECK(again.order == plain.order);
}
