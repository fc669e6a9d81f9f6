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
#include "engine/parallel.hpp"

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

constexpr std::size_t kQueryChunk = 512;

// nanoflann 1.4 builds its tree on one thread (10M points: most of the graph stage). Here the
// top levels are split with nanoflann's own rule (middleSplit_) and the subtrees below are
// built by its own divideTree as OpenMP tasks, each in a helper index (nanoflann's node pool
// is not shared between threads; the helpers own their nodes for the tree's lifetime). A
// split depends only on the points of its range and the range's box, so the tree, its leaf
// order and every search equal nanoflann's serial build, whatever the thread count.
constexpr std::size_t kParallelLevels = 4;      // up to 16 subtrees: load balance on 2 to 8 threads
constexpr std::size_t kParallelMinimum = 4096;  // below this, one nanoflann build on one thread

template <int Dim>
struct BuiltTree {
  using Index = Tree<Dim>;
  using Box = typename Index::BoundingBox;
  using Node = typename Index::Node;
  using Offset = typename Index::Offset;

  PointSetAdaptor adaptor;
  Index tree;
  std::vector<std::unique_ptr<Index>> helpers;

  explicit BuiltTree(const PointSet& p) : adaptor{p}, tree(make(p)) {
    if (p.rows < kParallelMinimum) {
      tree.buildIndex();
      return;
    }
    tree.init_vind();
    tree.computeBoundingBox(tree.root_bbox);
    ExceptionCollector errors;
    Node* root = nullptr;
#pragma omp parallel
#pragma omp single
    errors.run([&] { root = divide(0, p.rows, tree.root_bbox, kParallelLevels, errors); });
    errors.rethrow();
    tree.root_node = root;
    tree.m_size_at_index_build = p.rows;
  }

 private:
  Index make(const PointSet& p) const {
    return Index(
        static_cast<int>(p.cols), adaptor,
        nanoflann::KDTreeSingleIndexAdaptorParams(
            kTreeLeafSize, p.rows < kParallelMinimum
                               ? nanoflann::KDTreeSingleIndexAdaptorFlags::None
                               : nanoflann::KDTreeSingleIndexAdaptorFlags::SkipInitialBuildIndex));
  }

  // nanoflann's divideTree for the top `levels` levels, the subtrees as tasks.
  Node* divide(Offset left, Offset right, Box& box, std::size_t levels,
               ExceptionCollector& errors) {
    if (levels == 0 || right - left <= kParallelMinimum) return subtree(left, right, box);
    Offset at = 0;
    typename Index::Dimension feature = 0;
    typename Index::DistanceType cut = 0;
    tree.middleSplit_(tree, left, right - left, at, feature, cut, box);
    Node* node = nullptr;
#pragma omp critical(unfurl_tree_pool)
    node = tree.pool.template allocate<Node>();
    node->node_type.sub.divfeat = feature;
    Box low(box), high(box);
    low[feature].high = static_cast<float>(cut);
    high[feature].low = static_cast<float>(cut);
#pragma omp task default(shared)
    errors.run([&] { node->child1 = divide(left, left + at, low, levels - 1, errors); });
    node->child2 = divide(left + at, right, high, levels - 1, errors);
#pragma omp taskwait
    if (errors.failed()) return node;
    node->node_type.sub.divlow = low[feature].high;
    node->node_type.sub.divhigh = high[feature].low;
    for (std::size_t d = 0; d < box.size(); ++d) {
      box[d].low = std::min(low[d].low, high[d].low);
      box[d].high = std::max(low[d].high, high[d].high);
    }
    return node;
  }

  // nanoflann's own serial build of vAcc[left, right) in a helper index; its offsets are
  // absolute, so the helper holds an index array as long as `right` and gives its range back.
  Node* subtree(Offset left, Offset right, Box& box) {
    auto helper = std::make_unique<Index>(
        tree.dim, adaptor,
        nanoflann::KDTreeSingleIndexAdaptorParams(
            kTreeLeafSize, nanoflann::KDTreeSingleIndexAdaptorFlags::SkipInitialBuildIndex));
    helper->vAcc.resize(right);
    std::copy(tree.vAcc.begin() + static_cast<std::ptrdiff_t>(left),
              tree.vAcc.begin() + static_cast<std::ptrdiff_t>(right),
              helper->vAcc.begin() + static_cast<std::ptrdiff_t>(left));
    Node* node = helper->divideTree(*helper, left, right, box);
    std::copy(helper->vAcc.begin() + static_cast<std::ptrdiff_t>(left), helper->vAcc.end(),
              tree.vAcc.begin() + static_cast<std::ptrdiff_t>(left));
    helper->vAcc = {};
#pragma omp critical(unfurl_tree_pool)
    helpers.push_back(std::move(helper));
    return node;
  }
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
    stop.advance(e - b);
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
    stop.advance(e - b);
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
