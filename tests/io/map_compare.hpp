// Comparison of two map records' groups (/graph, /quality, /preprocess, /input, /placement), field
// by field, for the map file tests.
#pragma once

#include <catch2/catch.hpp>

#include "io/map_record.hpp"

namespace unfurl::test {

inline void check_same_preprocess(const PreprocessModel& a, const PreprocessModel& b) {
  CHECK(a.input_cols == b.input_cols);
  CHECK(a.scale == b.scale);
  CHECK(a.metric == b.metric);
  CHECK(a.centre == b.centre);
  CHECK(a.spread == b.spread);
  CHECK(a.components == b.components);
  CHECK(a.pca_mean == b.pca_mean);
  CHECK(a.axes == b.axes);
  CHECK(a.variances == b.variances);
  CHECK(a.variance_kept == b.variance_kept);
}

inline void check_same_groups(const io::MapContents& a, const io::MapContents& b) {
  CHECK(a.graph == b.graph);
  CHECK(a.quality == b.quality);
  CHECK(a.input == b.input);
  CHECK(a.placement == b.placement);
  REQUIRE(b.preprocess.has_value() == a.preprocess.has_value());
  if (a.preprocess) check_same_preprocess(*a.preprocess, *b.preprocess);
}

}  // namespace unfurl::test
