#include "engine/detail/rank_tree.hpp"

#include <algorithm>
#include <limits>

namespace unfurl::detail {
namespace {

// Most points in a leaf (common practice, no source: 8-32 balances depth and scanning).
constexpr std::size_t kLeaf = 16;

}  // namespace

RankTree::RankTree(const PointSet& points) : points_(points), d_(points.cols) {
  const std::size_t n = points.rows;
  order_.resize(n);
  for (std::size_t i = 0; i < n; ++i) order_[i] = static_cast<NodeId>(i);
  rows_.assign(points.values.begin(), points.values.begin() + static_cast<std::ptrdiff_t>(n * d_));
  nodes_.reserve(2 * (n / kLeaf + 1));
  Scratch scratch;
  scratch.keys.reserve(n);
  scratch.ids.resize(n);
  scratch.rows.resize(n * d_);
  build(0, n, scratch);
  where_.resize(n);
  for (std::size_t p = 0; p < n; ++p) where_[order_[p]] = static_cast<NodeId>(p);
}

// The points move with their ids (rows_ in step with order_), so every level reads them in
// sequence instead of gathering each from the input (at 10M points the two trees' builds were
// 9% of a profiled run's CPU; this takes about 0.6 of their time). The split is std::nth_element
// over (key, position) pairs compared by key alone: the same comparisons and moves as over the ids
// compared by their points' keys, hence the same tree as before, bit for bit.
std::size_t RankTree::build(std::size_t begin, std::size_t end, Scratch& scratch) {
  const std::size_t id = nodes_.size();
  nodes_.push_back({begin, end});
  low_.resize(low_.size() + d_, std::numeric_limits<float>::infinity());
  high_.resize(high_.size() + d_, -std::numeric_limits<float>::infinity());
  float* low = low_.data() + id * d_;
  float* high = high_.data() + id * d_;
  for (const float* row = rows_.data() + begin * d_; row != rows_.data() + end * d_; row += d_)
    for (std::size_t c = 0; c < d_; ++c) {
      low[c] = std::min(low[c], row[c]);
      high[c] = std::max(high[c], row[c]);
    }
  if (end - begin <= kLeaf) return id;
  std::size_t axis = 0;
  float widest = -1;
  for (std::size_t c = 0; c < d_; ++c)
    if (high[c] - low[c] > widest) widest = high[c] - low[c], axis = c;
  if (!(widest > 0)) return id;  // all points equal: one leaf
  const std::size_t mid = begin + (end - begin) / 2;
  auto& keys = scratch.keys;
  keys.clear();
  for (std::size_t p = begin; p < end; ++p)
    keys.push_back({rows_[p * d_ + axis], static_cast<NodeId>(p)});
  std::nth_element(keys.begin(), keys.begin() + static_cast<std::ptrdiff_t>(mid - begin),
                   keys.end(), [](const Keyed& a, const Keyed& b) { return a.key < b.key; });
  for (std::size_t i = 0; i < keys.size(); ++i) {
    const std::size_t from = keys[i].position;
    scratch.ids[i] = order_[from];
    std::copy_n(rows_.data() + from * d_, d_, scratch.rows.data() + i * d_);
  }
  std::copy_n(scratch.ids.begin(), keys.size(),
              order_.begin() + static_cast<std::ptrdiff_t>(begin));
  std::copy_n(scratch.rows.begin(), keys.size() * d_,
              rows_.begin() + static_cast<std::ptrdiff_t>(begin * d_));
  const std::size_t left = build(begin, mid, scratch);
  const std::size_t right = build(mid, end, scratch);
  nodes_[id].left = left;
  nodes_[id].right = right;
  return id;
}

// The box's nearest (or farthest) corner, each coordinate difference exact (floats in double)
// and summed in column order like exact_squared_to: since rounding is monotone, no point of
// the box rounds nearer than the nearest corner or farther than the farthest.
__attribute__((optimize("fp-contract=off"))) double RankTree::box_distance(const double* q,
                                                                           std::size_t node,
                                                                           bool farthest) const {
  double sum = 0;
  for (std::size_t c = 0; c < d_; ++c) {
    const double lo = low_[node * d_ + c], hi = high_[node * d_ + c];
    const double t = farthest ? std::max(q[c] - lo, hi - q[c])
                              : (q[c] < lo ? lo - q[c] : (q[c] > hi ? q[c] - hi : 0.0));
    sum = c == 0 ? t * t : sum + t * t;
  }
  return sum;
}

void RankTree::search(const double* q, std::size_t self, std::size_t node, std::size_t count,
                      std::vector<Ranked>& heap) const {
  const Node& nd = nodes_[node];
  if (nd.left == 0) {
    for (std::size_t p = nd.begin; p < nd.end; ++p) {
      const NodeId id = order_[p];
      if (id == self) continue;
      const Ranked r{exact_squared_to(q, rows_.data() + p * d_, d_), id};
      if (heap.size() < count) {
        heap.push_back(r);
        std::push_heap(heap.begin(), heap.end(), Before{});
      } else if (before(r, heap.front())) {
        std::pop_heap(heap.begin(), heap.end(), Before{});
        heap.back() = r;
        std::push_heap(heap.begin(), heap.end(), Before{});
      }
    }
    return;
  }
  std::size_t first = nd.left, second = nd.right;
  double near_first = box_distance(q, first, false), near_second = box_distance(q, second, false);
  if (near_second < near_first) std::swap(first, second), std::swap(near_first, near_second);
  // A box whose nearest corner is beyond the worst kept distance holds nothing better; at an
  // equal distance a lower id could still enter.
  if (heap.size() < count || !(near_first > heap.front().dist2))
    search(q, self, first, count, heap);
  if (heap.size() < count || !(near_second > heap.front().dist2))
    search(q, self, second, count, heap);
}

void RankTree::nearest(std::size_t self, std::size_t count, std::vector<Ranked>& out) const {
  std::vector<double> q(points_.row(self), points_.row(self) + d_);
  out.clear();
  out.reserve(count + 1);
  if (count > 0) search(q.data(), self, 0, count, out);
  std::sort_heap(out.begin(), out.end(), Before{});
}

std::size_t RankTree::count_before(const double* q, std::size_t self, const Ranked& bound,
                                   std::size_t node) const {
  const Node& nd = nodes_[node];
  if (box_distance(q, node, false) > bound.dist2) return 0;
  const bool holds_self = where_[self] >= nd.begin && where_[self] < nd.end;
  if (box_distance(q, node, true) < bound.dist2) return nd.end - nd.begin - (holds_self ? 1 : 0);
  if (nd.left != 0)
    return count_before(q, self, bound, nd.left) + count_before(q, self, bound, nd.right);
  std::size_t n = 0;
  for (std::size_t p = nd.begin; p < nd.end; ++p) {
    const NodeId id = order_[p];
    if (id != self && before({exact_squared_to(q, rows_.data() + p * d_, d_), id}, bound)) ++n;
  }
  return n;
}

std::size_t RankTree::rank(std::size_t self, NodeId j) const {
  std::vector<double> q(points_.row(self), points_.row(self) + d_);
  const Ranked bound{exact_squared_to(q.data(), points_.row(j), d_), j};
  return 1 + count_before(q.data(), self, bound, 0);
}

}  // namespace unfurl::detail
