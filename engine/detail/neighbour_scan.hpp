// Exact neighbour ranks against every point, without storing a distance row: distances are
// recomputed chunk by chunk (a chunk of points stays in cache while a block of queries uses it).
//
// Ranking convention (shared by every quality score): neighbours of a query are ordered by
// (squared distance, id), so equal distances go to the lower id, which is what a stable sort
// of the distance row gives. The query itself is excluded by id, never by position, so a
// duplicate of the query ranks first like any other point at distance 0.
#pragma once

#include <cstddef>
#include <limits>
#include <span>
#include <vector>

#include "engine/points.hpp"

namespace unfurl::detail {

struct Ranked {
  double dist2;  // squared Euclidean distance from the query
  NodeId id;
};

inline bool before(const Ranked& a, const Ranked& b) {
  return a.dist2 < b.dist2 || (a.dist2 == b.dist2 && a.id < b.id);
}
// The same order as a function object, so std::sort and std::nth_element inline it.
struct Before {
  bool operator()(const Ranked& a, const Ranked& b) const { return before(a, b); }
};

// Squared distances in double. The difference of two float32 values is exact in double, so
// bit-identical points give bit-identical distances and ties are real ties.
class DistanceScanner {
 public:
  explicit DistanceScanner(const PointSet& points);

  std::size_t rows() const { return points_.rows; }
  std::size_t dims() const { return points_.cols; }
  std::size_t chunk() const { return chunk_; }  // points per chunk

  // Row i as doubles into q (dims() values).
  void load_query(std::size_t i, double* q) const;

  // dist2[b * chunk() + (l - begin)] = |q_b - x_l|^2 for b < count, l in [begin, end), where
  // end - begin <= chunk() and queries holds count rows of dims() doubles. `columns` is the
  // caller's scratch (the chunk transposed), reused between calls.
  void distances(const double* queries, std::size_t count, std::size_t begin, std::size_t end,
                 std::vector<float>& columns, double* dist2) const;

 private:
  const PointSet& points_;
  std::size_t chunk_;
  // The whole set transposed (d x N) when it takes at most 1 GiB, else empty and each chunk
  // is transposed on the fly: transposing per chunk costs as much as the distances for low d.
  std::vector<float> columns_;
};

// |q - x|^2 for a query q of d doubles and a float row x, with the bits of
// DistanceScanner::distances (the same terms summed in the same order), for ranks decided
// outside the scan.
double exact_squared_to(const double* q, const float* x, std::size_t d);

// Keeps the `size` points that come first in the ranking convention. Points must be offered
// in increasing id order (the scan order), which lets a plain distance comparison break ties.
// Accepted points are appended to a buffer of up to 2 * size and cut back to the best `size`
// by a selection when it fills: O(1) per accepted point, where a heap costs O(log size) with a
// large constant (it dominated the scan at N = 20,000).
class NearestList {
 public:
  void reset(std::size_t size);
  // Offers points begin..end-1 with squared distances dist2[0 .. end-begin), except `skip`
  // (the query itself). Most points cost one compare with the cached cut-off.
  void offer_range(const double* dist2, std::size_t begin, std::size_t end, std::size_t skip) {
    double worst = worst_;  // a local, so the compiler keeps it in a register
    for (std::size_t l = begin; l < end; ++l) {
      const double d = dist2[l - begin];
      if (!(d < worst) || l == skip) continue;
      buffer_.push_back({d, static_cast<NodeId>(l)});
      if (buffer_.size() == 2 * size_) {
        cut();
        worst = worst_;
      }
    }
  }
  // Ascending by (dist2, id); the list is emptied.
  void take_sorted(std::vector<Ranked>& out);

 private:
  static constexpr double kInf = std::numeric_limits<double>::infinity();
  void cut();  // keep the best size_, and raise worst_ to the last kept distance
  std::size_t size_ = 0;
  double worst_ = kInf;  // a later point (higher id) must be strictly nearer to be kept
  std::vector<Ranked> buffer_;
};

// For each of `count` queries (rows of `queries`, ids selves[b]) and its sorted, distinct
// thresholds[b]: ranks[b][a] = 1 + the number of points l != selves[b] that come before
// thresholds[b][a], the 1-based rank of that neighbour among all the query's neighbours. One
// pass over the points serves the whole block of queries.
void ranks_of(const DistanceScanner& scanner, const double* queries, std::size_t count,
              std::span<const NodeId> selves, std::span<const std::vector<Ranked>> thresholds,
              std::vector<float>& columns, std::vector<double>& dist2,
              std::vector<std::vector<std::size_t>>& ranks);

}  // namespace unfurl::detail
