// Exact neighbour search back ends shared by the graph builder, exact_knn and the bridging of
// components. Internal: the public face is engine/neighbours.hpp.
//
// Exactness: every reported squared distance is exact_squared() of the two float rows, a
// double sum of exact double differences, so both back ends give bit-identical values and
// order. Neighbours are ordered by (squared distance, index): ties go to the smaller index.
#pragma once

#include <cstddef>
#include <span>
#include <vector>

#include "engine/points.hpp"
#include "engine/stop.hpp"

namespace unfurl::detail {

struct Neighbour {
  NodeId index = 0;
  double squared = 0.0;  // exact squared Euclidean distance
};

inline bool closer(const Neighbour& a, const Neighbour& b) {
  return a.squared < b.squared || (a.squared == b.squared && a.index < b.index);
}

// Differences of floats are exact in double and their squares nearly so; the sum runs in
// index order so that every caller gets the same bits.
inline double exact_squared(const float* a, const float* b, std::size_t d) {
  double sum = 0.0;
  for (std::size_t i = 0; i < d; ++i) {
    const double diff = static_cast<double>(a[i]) - static_cast<double>(b[i]);
    sum += diff * diff;
  }
  return sum;
}

// exact_squared(a, rows[c], d) for c < count, the same bits: each sum still runs in index
// order, but kExactBatch of them share one loop, so their additions overlap in the processor
// instead of each waiting on its own previous one.
constexpr std::size_t kExactBatch = 4;
inline void exact_squared_batch(const float* a, const float* const* rows, std::size_t count,
                                std::size_t d, double* out) {
  std::size_t c = 0;
  for (; c + kExactBatch <= count; c += kExactBatch) {
    double sum[kExactBatch] = {};
    for (std::size_t i = 0; i < d; ++i)
      for (std::size_t b = 0; b < kExactBatch; ++b) {
        const double diff = static_cast<double>(a[i]) - static_cast<double>(rows[c + b][i]);
        sum[b] += diff * diff;
      }
    for (std::size_t b = 0; b < kExactBatch; ++b) out[c + b] = sum[b];
  }
  for (; c < count; ++c) out[c] = exact_squared(a, rows[c], d);
}

// The k nearest data rows of every query row, written to out[q*k .. q*k+k) in closer()
// order. With exclude_self, query q is data row q and is never its own neighbour (identified
// by index, so an exact duplicate of q is still found). Requires k <= available rows.
void knn_tree(const PointSet& data, const PointSet& queries, std::size_t k, bool exclude_self,
              std::span<Neighbour> out, StopToken stop);
void knn_scan(const PointSet& data, const PointSet& queries, std::size_t k, bool exclude_self,
              std::size_t block_rows, std::span<Neighbour> out, StopToken stop);

// Every data row within `radius` (inclusive: exact distance <= radius) of each query row,
// sorted by index. exclude_self as above.
using RadiusLists = std::vector<std::vector<Neighbour>>;
RadiusLists radius_tree(const PointSet& data, const PointSet& queries, double radius,
                        bool exclude_self, StopToken stop);
RadiusLists radius_scan(const PointSet& data, const PointSet& queries, double radius,
                        bool exclude_self, std::size_t block_rows, StopToken stop);

// Most points in a k-d tree leaf (common practice, no source: 10-20 balances depth and scan).
inline constexpr std::size_t kTreeLeafSize = 16;

// The rows in the leaf order of a k-d tree over them (nearby rows end up adjacent).
std::vector<NodeId> tree_leaf_order(const PointSet& points);

// Runs body(begin, end) over [0, count) in chunks of `chunk`, in parallel with OpenMP,
// polling `stop` before each chunk and rethrowing the first exception after the region.
template <class Body>
void parallel_chunks(std::size_t count, std::size_t chunk, StopToken stop, const char* stage,
                     Body&& body);

}  // namespace unfurl::detail

#include "engine/detail/parallel_chunks.hpp"
