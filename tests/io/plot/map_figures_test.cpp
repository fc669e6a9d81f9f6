// The plots' one adapter reads the typed map record: a map written through io/map_file.hpp
// gives the figures its scores, intervals, per-point terms and residual curve unchanged.
#include "io/plot/map_figures.hpp"

#include <catch2/catch.hpp>

#include <cmath>

#include "engine/error.hpp"
#include "tests/io/temp_folder.hpp"

namespace {

unfurl::io::MapContents scored_map() {
  unfurl::io::MapContents c;
  c.coords = unfurl::PointSet(5, 2);
  for (std::size_t i = 0; i < 10; ++i) c.coords.values[i] = static_cast<float>(i) * 0.5f;
  c.rows = {0, 1, 2, 4, 6};
  c.spectrum = {9.0, 4.0};
  c.spectrum_attributes = {{"order", 5}, {"noise_floor", 0.5}};
  // Stored out of k order: the reader and the adapter give them ascending.
  for (std::int64_t k : {7, 3}) {
    unfurl::io::MapScoreRecord s;
    s.k = k;
    s.trustworthiness = 0.9 + k * 0.001;
    s.continuity = 0.8 + k * 0.001;
    s.trustworthiness_95 = {0.85, 0.95};
    s.continuity_95 = {0.75, 0.85};
    s.method = "sampled";
    s.sample_size = 3;
    s.interval_method = "betting";
    s.scored_rows = {4, 0, 2};
    s.trustworthiness_terms = {0.25, 0.5, 0.125 * k};
    s.continuity_terms = {0.0, 0.375, 1.0};
    c.quality.by_k.push_back(s);
  }
  c.quality.residual = unfurl::io::MapResidualRecord{.by_dims = {0.25, 0.0625},
                                                     .standard_error = {},
                                                     .pairs = 10,
                                                     .sampled = false,
                                                     .drawn = "every pair"};
  unfurl::io::MapGraphRecord graph;
  graph.component_sizes = {5};
  c.graph = graph;
  return c;
}

}  // namespace

TEST_CASE("the plots adapter reads scores, terms and residuals from the typed record", "[plot]") {
  unfurl::test::TempFolder dir;
  unfurl::io::write_map(dir / "scored.h5", scored_map());
  const unfurl::io::plot::PlotMap m = unfurl::io::plot::read_plot_map(dir / "scored.h5");
  CHECK(m.name == "scored.h5");
  CHECK(m.coords.rows == 5);
  REQUIRE(m.scores.size() == 2);
  CHECK(m.scores[0].k == 3);
  CHECK(m.scores[1].k == 7);
  CHECK(m.scores[0].t == 0.9 + 3 * 0.001);
  CHECK(m.scores[0].t_low == 0.85);
  CHECK(m.scores[0].t_high == 0.95);
  CHECK(m.scores[1].c == 0.8 + 7 * 0.001);
  CHECK(m.scores[1].c_low == 0.75);
  CHECK(m.scores[0].method == "sampled");
  CHECK(m.scores[0].sample_size == 3);
  CHECK(m.scores[0].scored_rows == std::vector<std::int64_t>{4, 0, 2});
  CHECK(m.residual_variance == std::vector<double>{0.25, 0.0625});
  REQUIRE(m.graph.has_value());
  CHECK(m.graph->component_sizes == std::vector<std::int64_t>{5});
  CHECK(m.spectrum_attributes.at("noise_floor") == 0.5);

  // The terms land on their map rows, at the smallest k; unscored rows stay NaN.
  const unfurl::io::plot::PointColours t =
      unfurl::io::plot::term_colours(m, unfurl::io::plot::TermColour::trustworthiness);
  REQUIRE(t.values.size() == 5);
  CHECK(t.values[4] == 0.25);
  CHECK(t.values[0] == 0.5);
  CHECK(t.values[2] == 0.375);
  CHECK(std::isnan(t.values[1]));
  CHECK(std::isnan(t.values[3]));
  CHECK(t.label == "term of 1 - T(k = 3)");

  const auto scores = unfurl::io::plot::scores_figure(m);
  REQUIRE(scores.series.size() == 2);
  CHECK(scores.series[0].x == std::vector<double>{3, 7});
  const auto residual = unfurl::io::plot::residual_figure(m);
  REQUIRE(residual.series.size() == 1);
  CHECK(residual.series[0].y == std::vector<double>{0.25, 0.0625});
}

TEST_CASE("the plots adapter names the map when it stores no terms", "[plot]") {
  unfurl::test::TempFolder dir;
  unfurl::io::MapContents c = scored_map();
  c.quality = {};
  unfurl::io::write_map(dir / "plain.h5", c);
  const auto m = unfurl::io::plot::read_plot_map(dir / "plain.h5");
  CHECK(m.scores.empty());
  CHECK(m.residual_variance.empty());
  CHECK_THROWS_WITH(unfurl::io::plot::term_colours(m, unfurl::io::plot::TermColour::continuity),
                    Catch::Contains("plain.h5"));
}
