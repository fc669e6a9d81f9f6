#include "engine/reorder.hpp"

#include <Eigen/Dense>
#include <algorithm>
#include <cstdint>

#include "engine/detail/neighbour_search.hpp"
#include "engine/detail/parallel_chunks.hpp"
#include "engine/detail/parallel_sort.hpp"
#include "engine/detail/pca.hpp"
#include "engine/error.hpp"
#include "engine/row_storage.hpp"

namespace unfurl {
namespace {

Renumbering from_old_of_new(std::vector<NodeId> old_of_new) {
  const std::size_t n = old_of_new.size();
  Renumbering r;
  r.old_of_new = Numbering(std::move(old_of_new), n);
  r.new_of_old = r.old_of_new.inverse();
  return r;
}

// Breadth-first order from `start`, neighbours taken by increasing degree; returns the
// visit order of the component and marks it.
void breadth_first(const NeighbourGraph& g, NodeId start, std::vector<bool>& seen,
                   std::vector<NodeId>& order) {
  std::size_t head = order.size();
  order.push_back(start);
  seen[start] = true;
  std::vector<NodeId> next;
  while (head < order.size()) {
    const NodeId v = order[head++];
    next.clear();
    for (auto e = g.offsets[v]; e < g.offsets[v + 1]; ++e) {
      const NodeId w = g.targets[static_cast<std::size_t>(e)];
      if (!seen[w]) seen[w] = true, next.push_back(w);
    }
    std::sort(next.begin(), next.end(), [&](NodeId a, NodeId b) {
      return g.degree(a) < g.degree(b) || (g.degree(a) == g.degree(b) && a < b);
    });
    order.insert(order.end(), next.begin(), next.end());
  }
}

std::vector<NodeId> cuthill_mckee(const NeighbourGraph& g) {
  const std::size_t n = g.nodes();
  std::vector<bool> seen(n, false), probe(n, false);
  std::vector<NodeId> order, trial;
  order.reserve(n);
  for (std::size_t s = 0; s < n; ++s) {
    if (seen[s]) continue;
    // A far node: the last one reached by a breadth-first search from s (one sweep of the
    // usual pseudo-peripheral heuristic; common practice, no source).
    trial.clear();
    breadth_first(g, static_cast<NodeId>(s), probe, trial);
    breadth_first(g, trial.back(), seen, order);
  }
  std::reverse(order.begin(), order.end());
  return order;
}

// Interleaves the low 21 bits of x, y and z.
std::uint64_t spread_bits(std::uint64_t v) {
  v &= 0x1fffff;
  v = (v | v << 32) & 0x1f00000000ffffull;
  v = (v | v << 16) & 0x1f0000ff0000ffull;
  v = (v | v << 8) & 0x100f00f00f00f00full;
  v = (v | v << 4) & 0x10c30c30c30c30c3ull;
  v = (v | v << 2) & 0x1249249249249249ull;
  return v;
}

// Rows behind the curve's principal axes (detail::fit_pca_top); tests/reference/pca_check.py
// checks the subspace they give against the whole data's.
constexpr std::size_t kCurveSample = 8192;

// Coordinates on the first m <= 3 principal axes (the centred points themselves when d <= 3).
std::vector<double> curve_coordinates(const PointSet& p, std::size_t m) {
  const std::size_t n = p.rows, d = p.cols;
  std::vector<double> coord(n * m);
  if (d <= 3) {
    std::vector<double> mean(d, 0.0);
    for (std::size_t i = 0; i < n; ++i)
      for (std::size_t j = 0; j < d; ++j) mean[j] += p.row(i)[j];
    for (double& v : mean) v /= static_cast<double>(n);
    for (std::size_t i = 0; i < n; ++i)
      for (std::size_t j = 0; j < d; ++j) coord[i * m + j] = p.row(i)[j] - mean[j];
    return coord;
  }
  // The axes from a fixed sample of kCurveSample rows: the full covariance cost Fashion-MNIST
  // (70,000 x 784) ~5 CPU-s of a 7.6 s node order, and the curve needs only a good subspace.
  const std::vector<std::size_t> at = detail::sample_rows(n, kCurveSample);
  const auto sampled = [&](std::size_t b, std::size_t e) {
    Eigen::MatrixXd x(static_cast<Eigen::Index>(e - b), static_cast<Eigen::Index>(d));
    for (std::size_t i = b; i < e; ++i)
      x.row(static_cast<Eigen::Index>(i - b)) = detail::double_rows(p, at[i], at[i] + 1);
    return x;
  };
  const detail::PcaFit fit = detail::fit_pca_top(at.size(), d, sampled, m);
  // Blocks of kPcaRowBlock rows whatever the thread count, so every product is the same.
  detail::parallel_chunks(
      n, detail::kPcaRowBlock, {}, "node order", [&](std::size_t b, std::size_t e) {
        const Eigen::MatrixXd y =
            detail::project_rows(detail::double_rows(p, b, e), fit.mean, fit.axes, m);
        for (std::size_t i = b; i < e; ++i)
          for (std::size_t a = 0; a < m; ++a)
            coord[i * m + a] = y(static_cast<Eigen::Index>(i - b), static_cast<Eigen::Index>(a));
      });
  return coord;
}

std::vector<NodeId> morton(const PointSet& p) {
  const std::size_t n = p.rows;
  const std::size_t m = std::min<std::size_t>(3, p.cols);
  const std::vector<double> coord = curve_coordinates(p, m);
  std::vector<double> lo(m, INFINITY), hi(m, -INFINITY);
  for (std::size_t i = 0; i < n; ++i)
    for (std::size_t a = 0; a < m; ++a) {
      lo[a] = std::min(lo[a], coord[i * m + a]);
      hi[a] = std::max(hi[a], coord[i * m + a]);
    }
  // One common scale keeps the cells cubes, so the curve follows the geometry.
  double width = 0.0;
  for (std::size_t a = 0; a < m; ++a) width = std::max(width, hi[a] - lo[a]);
  const double cells = width > 0.0 ? 2097151.0 / width : 0.0;
  std::vector<std::pair<std::uint64_t, NodeId>> keys(n);
  detail::parallel_chunks(n, 1 << 16, {}, "node order", [&](std::size_t b, std::size_t e) {
    for (std::size_t i = b; i < e; ++i) {
      std::uint64_t key = 0;
      for (std::size_t a = 0; a < m; ++a)
        key |= spread_bits(static_cast<std::uint64_t>((coord[i * m + a] - lo[a]) * cells)) << a;
      keys[i] = {key, static_cast<NodeId>(i)};
    }
  });
  detail::parallel_sort(keys);  // the node index makes every key distinct
  std::vector<NodeId> order(n);
  detail::parallel_chunks(n, 1 << 16, {}, "node order", [&](std::size_t b, std::size_t e) {
    for (std::size_t i = b; i < e; ++i) order[i] = keys[i].second;
  });
  return order;
}

}  // namespace

const char* node_order_name(NodeOrder order) {
  switch (order) {
    case NodeOrder::input:
      return "input";
    case NodeOrder::bfs:
      return "bfs";
    case NodeOrder::morton:
      return "morton";
    case NodeOrder::tree_leaves:
      return "tree_leaves";
  }
  return "?";
}

Renumbering node_order(NodeOrder order, const NeighbourGraph& graph, const PointSet& node_points) {
  const std::size_t n = graph.nodes();
  if ((order == NodeOrder::morton || order == NodeOrder::tree_leaves) && node_points.rows != n)
    throw OptionError("EmbedOptions.order", std::string(node_order_name(order)) +
                                                " needs the points of all " + std::to_string(n) +
                                                " nodes, got " + std::to_string(node_points.rows));
  switch (order) {
    case NodeOrder::input:
      return {Numbering::identity(n), Numbering::identity(n)};
    case NodeOrder::bfs:
      return from_old_of_new(cuthill_mckee(graph));
    case NodeOrder::morton:
      return from_old_of_new(n ? morton(node_points) : std::vector<NodeId>{});
    case NodeOrder::tree_leaves:
      return from_old_of_new(detail::tree_leaf_order(node_points));
  }
  throw InternalError("node_order: unknown order");
}

NeighbourGraph renumber(const NeighbourGraph& g, const Renumbering& r) {
  const std::size_t n = g.nodes();
  if (r.new_of_old.size() != n || r.old_of_new.size() != n)
    throw InternalError("renumber: the renumbering does not match the graph");
  NeighbourGraph out;
  detail::reserve_huge_pages(out.offsets, n + 1);
  out.offsets.assign(n + 1, 0);
  for (std::size_t v = 0; v < n; ++v)
    out.offsets[v + 1] = out.offsets[v] + static_cast<std::int64_t>(g.degree(r.old_of_new[v]));
  // The shortest-path searches walk these arrays: 2 MiB pages cut their TLB misses.
  detail::reserve_huge_pages(out.targets, g.targets.size());
  detail::reserve_huge_pages(out.lengths, g.lengths.size());
  out.targets.resize(g.targets.size());
  out.lengths.resize(g.lengths.size());
  detail::parallel_chunks(n, 4096, {}, "reorder", [&](std::size_t b, std::size_t e) {
    std::vector<std::pair<NodeId, float>> row;
    for (std::size_t v = b; v < e; ++v) {
      const NodeId old = r.old_of_new[v];
      row.clear();
      for (auto k = g.offsets[old]; k < g.offsets[old + 1]; ++k)
        row.push_back({r.new_of_old[g.targets[static_cast<std::size_t>(k)]],
                       g.lengths[static_cast<std::size_t>(k)]});
      std::sort(row.begin(), row.end());
      for (std::size_t k = 0; k < row.size(); ++k) {
        out.targets[static_cast<std::size_t>(out.offsets[v]) + k] = row[k].first;
        out.lengths[static_cast<std::size_t>(out.offsets[v]) + k] = row[k].second;
      }
    }
  });
  return out;
}

}  // namespace unfurl
