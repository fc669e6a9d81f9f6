#include "engine/progress.hpp"

#include <omp.h>

#include <catch2/catch.hpp>
#include <stdexcept>
#include <string>
#include <vector>

#include "engine/assessment.hpp"
#include "engine/embedding.hpp"
#include "engine/stop.hpp"
#include "engine/synthetic.hpp"

using namespace unfurl;

namespace {

// Keeps what the stages announce: each outermost step with its total, and at its end the
// units counted.
struct RecordingSink final : ProgressSink {
  struct Step {
    std::string name;
    std::uint64_t total_at_start = 0, total = 0, done = 0;
    bool ok = false, finished = false;
  };
  std::vector<Step> steps;
  void step_started(std::string_view step, std::uint64_t total) noexcept override {
    steps.push_back({std::string(step), total, 0, 0, false, false});
  }
  void step_finished(std::string_view step, bool ok) noexcept override {
    Step& s = steps.back();
    s.finished = s.name == step;
    s.ok = ok;
    s.total = total();
    s.done = done();
  }
  const Step* find(const std::string& name) const {
    for (const Step& s : steps)
      if (s.name == name) return &s;
    return nullptr;
  }
};

}  // namespace

TEST_CASE("progress: units added from every thread sum exactly", "[progress]") {
  // Arithmetic: 4 threads x 25,000 single-unit adds are 100,000 units; a lost update would
  // show as fewer.
  RecordingSink sink;
  const StopToken token{nullptr, &sink};
  {
    const ProgressStep step = token.step("count", 100000);
#pragma omp parallel for num_threads(4) schedule(static)
    for (int i = 0; i < 100000; ++i) token.advance(1);
  }
  REQUIRE(sink.steps.size() == 1);
  CHECK(sink.steps[0].done == 100000);
  CHECK(sink.steps[0].total == 100000);
  CHECK(sink.steps[0].ok);
}

TEST_CASE("progress: steps do not nest, and an exception ends a step as failed", "[progress]") {
  RecordingSink sink;
  const StopToken token{nullptr, &sink};
  {
    const ProgressStep outer = token.step("outer", 10);
    const ProgressStep inner = token.step("inner", 99);  // counted into the outer step
    token.advance(3);
  }
  REQUIRE(sink.steps.size() == 1);
  CHECK(sink.steps[0].name == "outer");
  CHECK(sink.steps[0].total == 10);
  CHECK(sink.steps[0].done == 3);
  try {
    const ProgressStep step = token.step("failing", 5);
    throw std::runtime_error("stop");
  } catch (const std::runtime_error&) {
  }
  REQUIRE(sink.steps.size() == 2);
  CHECK(sink.steps[1].finished);
  CHECK_FALSE(sink.steps[1].ok);
  // A token without a sink counts nothing and opens nothing.
  const StopToken silent = token.silent();
  const ProgressStep none = silent.step("none", 1);
  silent.advance(7);
  CHECK(sink.steps.size() == 2);
}

TEST_CASE("progress: an embedding reports its steps with one unit per row of work", "[progress]") {
  // The totals are counts the method fixes (analytic): the neighbour search answers one query
  // per distinct point, landmark MDS runs one Dijkstra per landmark (de Silva and Tenenbaum
  // 2004) and triangulates every map row, and the scores visit each sampled point once.
  const std::size_t n = 1500, landmarks = 24, sample = 300;
  const SyntheticSet roll = swiss_roll(n, 7);
  for (Search search : {Search::tree, Search::scan}) {
    for (Pick pick : {Pick::maxmin, Pick::random}) {
      RecordingSink sink;
      EmbedOptions o;
      o.graph.search = search;
      o.landmarks.count = LandmarkCount{landmarks};
      o.landmarks.pick = pick;
      const EmbedResult r = embed_points(roll.points, o, StopToken{nullptr, &sink});
      REQUIRE(r.rows.size() == n);  // the roll is connected at the default k
      std::vector<std::string> names;
      for (const auto& s : sink.steps) names.push_back(s.name);
      CHECK(names == std::vector<std::string>{"graph", "short circuits", "components", "node order",
                                              "landmark rows", "spectral"});
      for (const auto& s : sink.steps) CHECK((s.finished && s.ok));
      const auto* graph = sink.find("graph");
      REQUIRE(graph);
      CHECK(graph->total == n);
      CHECK(graph->done == n);
      const auto* rows = sink.find("landmark rows");
      REQUIRE(rows);
      CHECK(rows->total == landmarks);
      CHECK(rows->done == landmarks);
      const auto* spectral = sink.find("spectral");
      REQUIRE(spectral);
      CHECK(spectral->total == n);
      CHECK(spectral->done == n);

      AssessOptions a;
      a.neighbourhoods.method = ScoreMethod::sampled;
      a.neighbourhoods.sample = sample;
      a.dimension.reset();
      const Assessment scores =
          assess_map(roll.points, r.coords, &r.geodesic, {}, a, StopToken{nullptr, &sink});
      const auto* scored = sink.find("scores");
      REQUIRE(scored);
      CHECK(scored->total_at_start == 0);  // the sample is drawn inside the step
      CHECK(scored->total == sample);
      CHECK(scored->done == sample);
      CHECK(scores.neighbourhoods.by_k.size() == 1);
    }
  }
}

TEST_CASE("progress: exact mode counts one geodesic row per node", "[progress]") {
  // Exact Isomap (Tenenbaum et al. 2000) runs a shortest-path search from every node.
  const std::size_t n = 400;
  const SyntheticSet roll = swiss_roll(n, 3);
  RecordingSink sink;
  EmbedOptions o;
  o.landmarks.count = AllLandmarks{};
  embed_points(roll.points, o, StopToken{nullptr, &sink});
  const auto* rows = sink.find("geodesic rows");
  REQUIRE(rows);
  CHECK(rows->total == n);
  CHECK(rows->done == n);
  const auto* spectral = sink.find("spectral");
  REQUIRE(spectral);
  CHECK(spectral->total == 0);  // the eigen solver has no count to give
}
