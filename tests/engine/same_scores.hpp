// The check shared by the tests of the scores' faster ways to the ranks (k-d tree counts,
// float32 products): the stage run with them must give the direct double scan's results.
#pragma once

#include <catch2/catch.hpp>

#include "engine/quality.hpp"

namespace unfurl::testing {

// Oracle: the same stage with every distance from the direct double scan (main's kernel,
// engine/detail/neighbour_scan.cpp): terms, estimates and intervals must be identical, exact
// and sampled. The map must misplace neighbours at many ranks (T(ks[2]) < 0.99), so the
// comparison is not vacuous.
inline void check_same_scores(const PointSet& input, const PointSet& map,
                              std::vector<std::size_t> ks, std::size_t sample) {
  QualityOptions o;
  o.ks = std::move(ks);
  o.sample = sample;
  for (const ScoreMethod method : {ScoreMethod::exact, ScoreMethod::sampled}) {
    o.method = method;
    const auto direct = detail::neighbourhood_scores(input, map, o, false, {});
    const auto fast = detail::neighbourhood_scores(input, map, o, true, {});
    REQUIRE(direct.by_k.size() == fast.by_k.size());
    for (std::size_t i = 0; i < direct.by_k.size(); ++i) {
      const auto& a = direct.by_k[i];
      const auto& b = fast.by_k[i];
      CHECK(a.scored_points == b.scored_points);
      CHECK(a.t_terms == b.t_terms);
      CHECK(a.c_terms == b.c_terms);
      CHECK(a.knn_terms == b.knn_terms);
      CHECK(a.trustworthiness == b.trustworthiness);
      CHECK(a.continuity == b.continuity);
      CHECK(a.t_low == b.t_low);
      CHECK(a.c_high == b.c_high);
    }
    CHECK(direct.by_k[2].trustworthiness < 0.99);
  }
}

}  // namespace unfurl::testing
