#include "engine/embedding.hpp"

#include <catch2/catch.hpp>
#include <cmath>
#include <vector>

#include "engine/graph_build.hpp"

using namespace unfurl;

namespace {

// x = 0..11 on a line, then an exact copy of x = 5, then three points 1000 away (a second
// component of a 2-nearest graph).
PointSet line_with_copy_and_outliers() {
  PointSet p(16, 2);
  for (std::size_t i = 0; i < 12; ++i) p.row(i)[0] = static_cast<float>(i);
  p.row(12)[0] = 5.0f;
  for (std::size_t i = 13; i < 16; ++i) {
    p.row(i)[0] = static_cast<float>(i);
    p.row(i)[1] = 1000.0f;
  }
  return p;
}

}  // namespace

TEST_CASE("embed_points: a line with a copy and a far piece maps back to input rows",
          "[embedding]") {
  // Geodesics along a line are |x_i - x_j| and classical MDS recovers them exactly in one
  // dimension (analytic ground truth; Torgerson 1952); both modes must give them.
  const PointSet p = line_with_copy_and_outliers();
  for (bool exact : {true, false}) {
    EmbedOptions o;
    o.graph.neighbourhood = NearestK{2};
    o.components.policy = ComponentPolicy::largest;
    o.spectral.dims = 1;
    o.landmarks.count = exact ? LandmarkChoice{AllLandmarks{}} : LandmarkChoice{LandmarkCount{4}};
    o.keep_geodesics = true;
    const EmbedResult r = embed_points(p, o);
    const std::vector<std::size_t> kept{0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12};
    CHECK(r.rows == kept);
    CHECK(r.dropped == std::vector<std::size_t>{13, 14, 15});
    REQUIRE(r.coords.rows == kept.size());
    for (std::size_t a = 0; a < kept.size(); ++a)
      for (std::size_t b = 0; b < kept.size(); ++b)
        CHECK(std::abs(r.coords.row(a)[0] - r.coords.row(b)[0]) ==
              Approx(std::abs(p.row(kept[a])[0] - p.row(kept[b])[0])).margin(1e-4));
    // Geodesic columns are map rows; each landmark row starts at its landmark's map row
    // and is a representative (row 12 is a copy of row 5, never a representative).
    REQUIRE(r.geodesic.cols == kept.size());
    REQUIRE(r.geodesic.rows == r.landmark_rows.size());
    for (std::size_t l = 0; l < r.geodesic.rows; ++l) {
      const std::size_t from = r.landmark_rows[l];
      CHECK(from != 12);
      CHECK(r.rows[r.geodesic.sources[l]] == from);
      for (std::size_t c = 0; c < kept.size(); ++c)
        CHECK(r.geodesic.row(l)[c] == std::abs(p.row(from)[0] - p.row(kept[c])[0]));
    }
  }
}

TEST_CASE("embed_graph: a given cycle and a far path keep the cycle's nodes", "[embedding]") {
  // A 20-node cycle with unit edges and a separate 4-node path: two components (analytic);
  // the largest is the cycle, whose geodesics min(|i - j|, 20 - |i - j|) the rows hold.
  std::vector<NodeId> from, to;
  std::vector<float> length;
  for (NodeId i = 0; i < 20; ++i)
    from.push_back(i), to.push_back((i + 1) % 20), length.push_back(1);
  for (NodeId i = 20; i < 23; ++i) from.push_back(i), to.push_back(i + 1), length.push_back(1);
  const NeighbourGraph g = graph_from_edges(24, from, to, length);
  EmbedOptions o;
  o.components.policy = ComponentPolicy::largest;
  o.landmarks.count = LandmarkCount{5};
  o.keep_geodesics = true;
  const EmbedResult r = embed_graph(g, o);
  CHECK(r.dropped == std::vector<std::size_t>{20, 21, 22, 23});
  REQUIRE(r.rows.size() == 20);
  REQUIRE(r.geodesic.rows == 5);
  for (std::size_t l = 0; l < 5; ++l) {
    const std::size_t s = r.landmark_rows[l];
    for (std::size_t c = 0; c < 20; ++c) {
      const std::size_t d = s > r.rows[c] ? s - r.rows[c] : r.rows[c] - s;
      CHECK(r.geodesic.row(l)[c] == static_cast<float>(std::min(d, 20 - d)));
    }
  }
}

TEST_CASE("embed_points: the stage seconds name every step, the residual score's rows included",
          "[embedding]") {
  // The figures a run prints must account for its time: the named steps run one after the
  // other, so their sum cannot exceed the total, and the residual variance's own geodesic rows
  // (sampled sources beyond all_pairs_limit) are a step of their own (common practice, no
  // source: a stage table whose parts do not add up misleads).
  PointSet p(400, 2);
  for (std::size_t i = 0; i < p.rows; ++i) {
    p.row(i)[0] = static_cast<float>(i % 20);
    p.row(i)[1] = static_cast<float>(i / 20);
  }
  EmbedOptions o;
  o.graph.neighbourhood = NearestK{6};
  o.landmarks.count = LandmarkCount{16};
  o.residual = ResidualOptions{.all_pairs_limit = 100, .sources = 32, .seed = 3};
  const EmbedResult r = embed_points(p, o);
  REQUIRE(r.residual.has_value());
  CHECK(r.residual->sampled);
  const StageSeconds& s = r.seconds;
  CHECK(s.residual > 0);
  CHECK(s.map_back >= 0);
  const double parts =
      s.graph + s.components + s.order + s.geodesics + s.spectral + s.residual + s.map_back;
  CHECK(parts <= s.total + 1e-9);
}
