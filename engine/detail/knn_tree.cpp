// k-d tree back end over nanoflann 1.4 (Debian 12). The tree's metric is exact_squared in
// double, so tree and scan agree bit for bit; nanoflann's radius search is strict (<), which
// radius_tree turns into the inclusive rule by searching just above r^2 and filtering.
#include <algorithm>
#include <cmath>
#include <limits>
#include <memory>
#include <nanoflann.hpp>

#include "engine/detail/neighbour_search.hpp"
#include "engine/error.hpp"

namespace unfurl::detail {
namespace {

// nanoflann's dataset adaptor contract, over a PointSet.
struct PointSetAdaptor {
  const PointSet& points;
  std::size_t kdtree_get_point_count() const { return points.rows; }
  float kdtree_get_pt(NodeId i, std::size_t dim) const { return points.row(i)[dim]; }
  template <class Box>
  bool kdtree_get_bbox(Box&) const {
    return false;
  }
};

// nanoflann's distance contract (as L2_Simple_Adaptor), with exact_squared as the metric.
// Dim > 0 fixes the dimension at compile time (the same sum, unrolled).
template <int Dim>
struct ExactL2 {
  using ElementType = float;
  using DistanceType = double;
  const PointSetAdaptor& source;
  explicit ExactL2(const PointSetAdaptor& s) : source(s) {}
  double evalMetric(const float* a, NodeId b, std::size_t size) const {
    return exact_squared(a, source.points.row(b), Dim > 0 ? static_cast<std::size_t>(Dim) : size);
  }
  template <class U, class V>
  double accum_dist(const U a, const V b, std::size_t) const {
    const double diff = static_cast<double>(a) - static_cast<double>(b);
    return diff * diff;
  }
};

template <int Dim>
using Tree = nanoflann::KDTreeSingleIndexAdaptor<ExactL2<Dim>, PointSetAdaptor, Dim, NodeId>;

constexpr std::size_t kLeafSize = 16;  // common practice, no source: 10-20 balances depth/scan
constexpr std::size_t kQueryChunk = 512;

template <int Dim>
struct BuiltTree {
  PointSetAdaptor adaptor;
  Tree<Dim> tree;
  explicit BuiltTree(const PointSet& p)
      : adaptor{p},
        tree(static_cast<int>(p.cols), adaptor,
             nanoflann::KDTreeSingleIndexAdaptorParams(kLeafSize)) {}
};

// All rows with exact squared distance <= squared of `query`, sorted by closer().
template <class Tree>
std::vector<Neighbour> within(const Tree& tree, const float* query, double squared) {
  std::vector<std::pair<NodeId, double>> found;
  const double bound = std::nextafter(squared, std::numeric_limits<double>::infinity());
  tree.radiusSearch(query, bound, found, nanoflann::SearchParams(32, 0.0f, false));
  std::vector<Neighbour> out;
  out.reserve(found.size());
  for (const auto& [index, d2] : found)
    if (d2 <= squared) out.push_back({index, d2});
  std::sort(out.begin(), out.end(), closer);
  return out;
}

// Queries run in the tree's leaf order: neighbouring queries then touch the same leaves,
// which keeps the search in cache (the order does not change any result).
template <class Built>
std::vector<NodeId> query_order(const Built& built, const PointSet& data, const PointSet& queries) {
  std::vector<NodeId> order;
  if (&data == &queries) {
    order.assign(built.tree.vAcc.begin(), built.tree.vAcc.end());
  } else {
    order.resize(queries.rows);
    for (std::size_t i = 0; i < queries.rows; ++i) order[i] = static_cast<NodeId>(i);
  }
  return order;
}

template <int Dim>
void knn_tree_dim(const PointSet& data, const PointSet& queries, std::size_t k, bool exclude_self,
                  std::span<Neighbour> out, StopToken stop) {
  if (k == 0 || queries.rows == 0) return;
  const std::size_t available = data.rows - (exclude_self ? 1 : 0);
  if (k > available) throw InternalError("knn_tree: k exceeds the rows available");
  const BuiltTree<Dim> built(data);
  const auto order = query_order(built, data, queries);
  // One more than needed tells whether a tie continues past the k-th neighbour.
  const std::size_t ask = std::min(k + 1 + (exclude_self ? 1 : 0), data.rows);
  parallel_chunks(queries.rows, kQueryChunk, stop, "graph", [&](std::size_t b, std::size_t e) {
    std::vector<NodeId> index(ask);
    std::vector<double> d2(ask);
    std::vector<Neighbour> list;
    for (std::size_t at = b; at < e; ++at) {
      const std::size_t q = order[at];
      const float* x = queries.row(q);
      const std::size_t got = built.tree.knnSearch(x, ask, index.data(), d2.data());
      list.clear();
      for (std::size_t j = 0; j < got; ++j)
        if (!(exclude_self && index[j] == q)) list.push_back({index[j], d2[j]});
      std::sort(list.begin(), list.end(), closer);
      // Points not returned are at least as far as the farthest returned one; only when
      // that one ties the k-th can the k-th place be contested.
      if (list.size() > k && list[k].squared == list[k - 1].squared) {
        list = within(built.tree, x, list[k - 1].squared);
        if (exclude_self) std::erase_if(list, [q](const Neighbour& n) { return n.index == q; });
      }
      if (list.size() < k) throw InternalError("knn_tree: fewer neighbours than asked");
      std::copy_n(list.begin(), k, out.begin() + static_cast<std::ptrdiff_t>(q * k));
    }
  });
}

template <int Dim>
RadiusLists radius_tree_dim(const PointSet& data, const PointSet& queries, double radius,
                            bool exclude_self, StopToken stop) {
  RadiusLists lists(queries.rows);
  if (data.rows == 0) return lists;
  const BuiltTree<Dim> built(data);
  const auto order = query_order(built, data, queries);
  const double r2 = radius * radius;
  parallel_chunks(queries.rows, kQueryChunk, stop, "graph", [&](std::size_t b, std::size_t e) {
    for (std::size_t at = b; at < e; ++at) {
      const std::size_t q = order[at];
      auto list = within(built.tree, queries.row(q), r2);
      if (exclude_self) std::erase_if(list, [q](const Neighbour& n) { return n.index == q; });
      std::sort(list.begin(), list.end(),
                [](const Neighbour& a, const Neighbour& c) { return a.index < c.index; });
      lists[q] = std::move(list);
    }
  });
  return lists;
}

}  // namespace

void knn_tree(const PointSet& data, const PointSet& queries, std::size_t k, bool exclude_self,
              std::span<Neighbour> out, StopToken stop) {
  switch (data.cols) {
    case 2:
      return knn_tree_dim<2>(data, queries, k, exclude_self, out, stop);
    case 3:
      return knn_tree_dim<3>(data, queries, k, exclude_self, out, stop);
    default:
      return knn_tree_dim<-1>(data, queries, k, exclude_self, out, stop);
  }
}

std::vector<NodeId> tree_leaf_order(const PointSet& points) {
  if (points.rows == 0) return {};
  const BuiltTree<-1> built(points);
  return {built.tree.vAcc.begin(), built.tree.vAcc.end()};
}

RadiusLists radius_tree(const PointSet& data, const PointSet& queries, double radius,
                        bool exclude_self, StopToken stop) {
  switch (data.cols) {
    case 2:
      return radius_tree_dim<2>(data, queries, radius, exclude_self, stop);
    case 3:
      return radius_tree_dim<3>(data, queries, radius, exclude_self, stop);
    default:
      return radius_tree_dim<-1>(data, queries, radius, exclude_self, stop);
  }
}

}  // namespace unfurl::detail
