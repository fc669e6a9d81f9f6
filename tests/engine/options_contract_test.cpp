// The stage contract (DESIGN.md 2): every options struct's validate(), and the stages that
// check their options, refuse each bad value with an OptionError whose field() is the
// options-struct field at fault, never a command-line flag. apps/ maps these fields to the
// flags a user typed. The expected fields are the project's own names (common practice, no
// source: a contract of this code base, not a published result).
#include <catch2/catch.hpp>
#include <cmath>
#include <limits>
#include <string>
#include <vector>

#include "engine/assessment.hpp"
#include "engine/components.hpp"
#include "engine/embedding.hpp"
#include "engine/error.hpp"
#include "engine/geodesic.hpp"
#include "engine/landmarks.hpp"
#include "engine/linear.hpp"
#include "engine/neighbours.hpp"
#include "engine/preprocess.hpp"
#include "engine/quality.hpp"
#include "engine/quality_dimension.hpp"
#include "engine/quality_residual.hpp"
#include "engine/reorder.hpp"
#include "engine/spectral.hpp"
#include "engine/synthetic.hpp"
#include "tests/test_util.hpp"

using namespace unfurl;

namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
constexpr double kInf = std::numeric_limits<double>::infinity();

// `refuse` must throw an OptionError naming `field`, in one line that starts with the field
// and names no flag.
template <class Refuse>
void names_field(const std::string& field, Refuse refuse) {
  INFO("expected field " << field);
  try {
    refuse();
    FAIL("no OptionError");
  } catch (const OptionError& e) {
    const std::string what = e.what();
    INFO("message: " << what);
    CHECK(e.field() == field);
    CHECK(what.rfind(field + ": ", 0) == 0);
    CHECK(what.find("--") == std::string::npos);
    CHECK(what.find('\n') == std::string::npos);
  }
}

}  // namespace

TEST_CASE("graph and kNN options name their fields", "[contract]") {
  const auto roll = swiss_roll(30, 1);
  const auto graph = [&](Neighbourhood n) {
    GraphOptions o;
    o.neighbourhood = n;
    return o;
  };
  names_field("NearestK.k", [&] { graph(NearestK{0}).validate(30); });
  names_field("NearestK.k", [&] { graph(NearestK{30}).validate(30); });
  for (const double r : {0.0, -1.0, kInf, kNaN})
    names_field("WithinRadius.radius",
                [&] { build_neighbour_graph(roll.points, graph(WithinRadius{r})); });
  GraphOptions blocks;
  blocks.block_rows = 0;
  names_field("GraphOptions.block_rows", [&] { blocks.validate(30); });
  for (const float e : {-1.0f, std::nanf("")}) {
    GraphOptions o;
    o.duplicate_epsilon = e;
    names_field("GraphOptions.duplicate_epsilon", [&] { o.validate(30); });
  }
  names_field("KnnOptions.k", [&] { exact_knn(roll.points, roll.points, {.k = 0}); });
  names_field("KnnOptions.k",
              [&] { exact_knn(roll.points, roll.points, {.k = 30, .exclude_self = true}); });
  names_field("KnnOptions.block_rows",
              [&] { exact_knn(roll.points, roll.points, {.k = 3, .block_rows = 0}); });
}

TEST_CASE("geodesic, landmark and spectral options name their fields", "[contract]") {
  const auto g = test::graph_from_edges(3, {{0, 1, 1.f}, {1, 2, 1.f}});
  const std::vector<NodeId> beyond{0, 3};
  names_field("GeodesicOptions.sources", [&] { geodesic_rows(g, {beyond}); });

  for (const std::size_t count : {std::size_t{0}, std::size_t{1}, std::size_t{4}}) {
    LandmarkOptions o;
    o.count = LandmarkCount{count};
    names_field("LandmarkOptions.count", [&] { pick_landmarks(g, o); });
  }

  const auto spectral = [](auto set) {
    SpectralOptions o;
    set(o);
    return o;
  };
  names_field("SpectralOptions.dims", [&] { spectral([](auto& o) { o.dims = 0; }).validate(10); });
  names_field("SpectralOptions.dims", [&] { spectral([](auto& o) { o.dims = 10; }).validate(10); });
  names_field("SpectralOptions.krylov",
              [&] { spectral([](auto& o) { o.krylov = 2; }).validate(10); });
  names_field("SpectralOptions.krylov",
              [&] { spectral([](auto& o) { o.krylov = 11; }).validate(10); });
  names_field("SpectralOptions.max_iterations",
              [&] { spectral([](auto& o) { o.max_iterations = 0; }).validate(10); });
  for (const double t : {0.0, kNaN})
    names_field("SpectralOptions.tolerance",
                [&] { spectral([t](auto& o) { o.tolerance = t; }).validate(10); });
  names_field("SpectralOptions.probes",
              [&] { spectral([](auto& o) { o.probes = 1; }).validate(10); });
  names_field("SpectralOptions.quadrature",
              [&] { spectral([](auto& o) { o.quadrature = 0; }).validate(10); });

  ComponentOptions c;
  c.sizes_in_message = 0;
  names_field("ComponentOptions.sizes_in_message", [&] { c.validate(); });
  const auto two_parts = test::graph_from_edges(4, {{0, 1, 1.f}, {2, 3, 1.f}});
  ComponentOptions bridge;
  bridge.policy = ComponentPolicy::bridge;  // without the points it needs
  names_field("ComponentOptions.policy", [&] { make_connected(two_parts, bridge); });
  names_field("EmbedOptions.order", [&] { node_order(NodeOrder::morton, g); });
}

TEST_CASE("embedding options name the field of the stage at fault", "[contract]") {
  const auto roll = swiss_roll(40, 1);
  EmbedOptions few;
  few.landmarks.count = LandmarkCount{2};  // below dims + 1 = 3
  names_field("LandmarkOptions.count", [&] { embed_points(roll.points, few); });
  EmbedOptions many;
  many.landmarks.count = LandmarkCount{41};
  names_field("LandmarkOptions.count", [&] { embed_points(roll.points, many); });
  EmbedOptions flat;
  flat.spectral.dims = 0;
  names_field("SpectralOptions.dims", [&] { embed_points(roll.points, flat); });
  EmbedOptions exact;  // exact mode checks dims against the nodes, in the spectral stage
  exact.landmarks.count = AllLandmarks{};
  exact.components.policy = ComponentPolicy::largest;
  exact.spectral.dims = 200;
  names_field("SpectralOptions.dims", [&] { embed_points(swiss_roll(200, 1).points, exact); });
  EmbedOptions bridge;
  bridge.components.policy = ComponentPolicy::bridge;
  const auto g = test::random_connected_graph(20, 20, 1);
  names_field("ComponentOptions.policy", [&] { embed_graph(g, bridge); });
}

TEST_CASE("quality, dimension, linear and preprocessing options name their fields", "[contract]") {
  const auto roll = swiss_roll(40, 1);
  const auto quality = [](auto set) {
    QualityOptions o;
    set(o);
    return o;
  };
  names_field("QualityOptions.ks", [&] { quality([](auto& o) { o.ks = {}; }).validate(40); });
  names_field("QualityOptions.ks", [&] { quality([](auto& o) { o.ks = {0}; }).validate(40); });
  names_field("QualityOptions.ks", [&] { quality([](auto& o) { o.ks = {20}; }).validate(40); });
  names_field("QualityOptions.sample",
              [&] { quality([](auto& o) { o.sample = 1; }).validate(40); });
  names_field("QualityOptions.threads",
              [&] { quality([](auto& o) { o.threads = -1; }).validate(40); });
  names_field("QualityOptions.exact_limit",
              [&] { quality([](auto& o) { o.exact_limit = 0; }).validate(40); });

  names_field("DimensionOptions.k", [&] { intrinsic_dimension(roll.points, {.k = 1}); });
  names_field("DimensionOptions.k",
              [&] { levina_bickel(std::vector<float>(40, 1.0f), 40, {.k = 1}); });
  EmbedOptions residual;
  residual.residual = ResidualOptions{.sources = 0};
  names_field("ResidualOptions.sources", [&] { residual.validate(40); });
  names_field("PairSampleOptions.count", [&] { sample_pair_distances(roll.points, {.count = 0}); });

  AssessOptions pairs;
  pairs.residual_pairs = 0;
  names_field("AssessOptions.residual_pairs", [&] { pairs.validate(40); });
  AssessOptions small_k;
  small_k.dimension = DimensionOptions{.k = 1};
  names_field("DimensionOptions.k", [&] { small_k.validate(40); });
  AssessOptions large_k;
  large_k.dimension = DimensionOptions{.k = 40};
  names_field("DimensionOptions.k", [&] { large_k.validate(40); });
  AssessOptions scores;
  scores.neighbourhoods.ks = {20};
  names_field("QualityOptions.ks",
              [&] { assess_map(roll.points, roll.truth, nullptr, {}, scores); });

  for (const std::size_t dims : {std::size_t{0}, std::size_t{4}}) {
    LinearOptions o;
    o.dims = dims;
    names_field("LinearOptions.dims", [&] { linear_map(roll.points, o); });
  }
  PreprocessOptions wide;
  wide.pca = 4;
  names_field("PreprocessOptions.pca", [&] { wide.validate(40, 3); });
  PreprocessOptions one_row;
  one_row.pca = 2;
  names_field("PreprocessOptions.pca", [&] { one_row.validate(1, 3); });
}
