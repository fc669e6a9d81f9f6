#include "engine/detail/rank_products.hpp"

#include <algorithm>
#include <cmath>

#include "engine/error.hpp"

namespace unfurl::detail {
namespace {

// Below this many columns a product of depth d does too little work per approximation to
// beat the direct scan's d subtractions. Not tuned: measured only at 784 columns
// (bench/RESULTS.md, lane scores); common practice, no source.
constexpr std::size_t kMinColumns = 16;
// Largest centred norm whose square, times the few terms of an approximation, stays finite
// in float32 (about 3.4e38).
constexpr double kMaxNorm = 1e18;

struct QueryState {
  std::vector<double> q;          // the query as doubles, as DistanceScanner::load_query
  std::vector<Ranked> threshold;  // the others with exact distances, in ranking order
  std::vector<std::size_t> below;
  std::vector<NodeId> doubtful;  // points whose place among the thresholds needs the exact value
  NearestList candidates;
  double slack = 0;
};

}  // namespace

bool products_serve(const PointSet& points) {
  if (points.cols < kMinColumns) return false;
  double mean_free_max = 0;  // a cheap over-estimate of the centred norms: 2 max |x|
  for (std::size_t i = 0; i < points.rows; ++i) {
    double sum = 0;
    for (std::size_t c = 0; c < points.cols; ++c)
      sum += double(points.row(i)[c]) * points.row(i)[c];
    mean_free_max = std::max(mean_free_max, sum);
  }
  return 2 * std::sqrt(mean_free_max) < kMaxNorm;
}

ProductRanker::ProductRanker(const PointSet& points)
    : points_(points), scan_(prepare_scan(points)) {}

void ProductRanker::rank(std::span<const std::uint32_t> selves, std::size_t count,
                         std::span<const std::vector<NodeId>> others,
                         std::vector<std::vector<Ranked>>& nearest,
                         std::vector<std::vector<std::size_t>>& ranks) const {
  const std::size_t n = points_.rows, d = points_.cols, block = selves.size();
  // Candidates beyond `count` absorb the approximation error (common practice, no source).
  const std::size_t keep = std::min(n - 1, count + std::max<std::size_t>(16, count));
  std::vector<std::size_t> rows(selves.begin(), selves.end());
  const QueryBlock qb = gather_queries(scan_, points_, rows);
  std::vector<QueryState> state(block);
  for (std::size_t b = 0; b < block; ++b) {
    QueryState& st = state[b];
    const float* p = points_.row(selves[b]);
    st.q.assign(p, p + d);
    for (NodeId j : others[b])
      st.threshold.push_back({exact_squared_to(st.q.data(), points_.row(j), d), j});
    std::sort(st.threshold.begin(), st.threshold.end(), Before{});
    st.below.assign(st.threshold.size(), 0);
    st.candidates.reset(keep);
    st.slack = qb.slack[b];
  }

  std::vector<double> approx(kColumnBlock);
  for_each_column_block(
      scan_, qb, [&](std::size_t b, std::size_t c0, const float* a, std::size_t cn) {
        QueryState& st = state[b];
        const std::size_t self = selves[b];
        for (std::size_t j = 0; j < cn; ++j) approx[j] = a[j];
        st.candidates.offer_range(approx.data(), c0, c0 + cn, self);
        if (st.threshold.empty()) return;
        const double s = st.slack, reach = st.threshold.back().dist2 + s;
        for (std::size_t j = 0; j < cn; ++j) {
          const double v = approx[j];
          if (v > reach || c0 + j == self) continue;  // after every threshold: the common case
          // The exact distance lies in [v - s, v + s]: the point comes before every threshold
          // above that interval and after every one below it; one inside needs the exact value.
          const auto it =
              std::lower_bound(st.threshold.begin(), st.threshold.end(), v - s,
                               [](const Ranked& t, double value) { return t.dist2 < value; });
          if (it->dist2 <= v + s)
            st.doubtful.push_back(static_cast<NodeId>(c0 + j));
          else
            ++st.below[static_cast<std::size_t>(it - st.threshold.begin())];
        }
      });

  nearest.resize(block);
  ranks.resize(block);
  std::vector<Ranked> listed;
  for (std::size_t b = 0; b < block; ++b) {
    QueryState& st = state[b];
    const std::vector<Ranked>& t = st.threshold;
    for (NodeId l : st.doubtful) {
      const Ranked r{exact_squared_to(st.q.data(), points_.row(l), d), l};
      if (!before(r, t.back())) continue;
      ++st.below[static_cast<std::size_t>(std::upper_bound(t.begin(), t.end(), r, Before{}) -
                                          t.begin())];
    }
    ranks[b].assign(others[b].size(), 0);
    std::size_t sum = 0;
    for (std::size_t a = 0; a < t.size(); ++a) {
      sum += st.below[a];
      const auto p = std::find(others[b].begin(), others[b].end(), t[a].id) - others[b].begin();
      ranks[b][static_cast<std::size_t>(p)] = sum + 1;
    }

    // The exact order of the candidates; they hold the `count` first points unless a point
    // left out could be nearer than the count-th, which its approximation rules out.
    st.candidates.take_sorted(listed);
    const double cut = listed.back().dist2;  // every point left out has an approximation >= cut
    for (Ranked& r : listed) r.dist2 = exact_squared_to(st.q.data(), points_.row(r.id), d);
    std::sort(listed.begin(), listed.end(), Before{});
    if (listed.size() < n - 1 && !(cut - st.slack > listed[count - 1].dist2)) {
      // Uncertified: the whole row, exactly.
      NearestList all;
      all.reset(count);
      std::vector<double> row(kColumnBlock);
      for (std::size_t c0 = 0; c0 < n; c0 += kColumnBlock) {
        const std::size_t cn = std::min(kColumnBlock, n - c0);
        for (std::size_t j = 0; j < cn; ++j)
          row[j] = exact_squared_to(st.q.data(), points_.row(c0 + j), d);
        all.offer_range(row.data(), c0, c0 + cn, selves[b]);
      }
      all.take_sorted(listed);
    }
    listed.resize(count);
    nearest[b] = listed;
  }
}

}  // namespace unfurl::detail
