#include "engine/neighbours.hpp"

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <limits>
#include <string>

#include "engine/detail/csr.hpp"
#include "engine/detail/duplicates.hpp"
#include "engine/detail/neighbour_search.hpp"
#include "engine/detail/point_checks.hpp"
#include "engine/error.hpp"

namespace unfurl {
namespace {

using detail::Edge;
using detail::Neighbour;

// Finite values (the shared check) whose squared distances are finite too: the searches
// square coordinate differences in float32, and a distance that overflows to infinity ties
// with the empty slots of a neighbour list, which then keep no valid index (seen on a
// damaged file holding 1.5e28 among values near 1).
void require_finite(const PointSet& points, const char* what) {
  detail::require_finite(points, what);
  std::vector<float> low(points.cols, 0.0f), high(points.cols, 0.0f);
  for (std::size_t i = 0; i < points.rows; ++i)
    for (std::size_t j = 0; j < points.cols; ++j) {
      const float v = points.row(i)[j];
      low[j] = i == 0 ? v : std::min(low[j], v);
      high[j] = i == 0 ? v : std::max(high[j], v);
    }
  double squared_span = 0;
  for (std::size_t j = 0; j < points.cols; ++j) {
    const double span = static_cast<double>(high[j]) - static_cast<double>(low[j]);
    squared_span += span * span;
    if (squared_span > 0.5 * std::numeric_limits<float>::max()) {
      char spread[32];
      std::snprintf(spread, sizeof spread, "%.3g", span);
      throw DataError(std::string(what) + ": column " + std::to_string(j) + " spans " + spread +
                      "; squared distances would exceed float32's range (rescale the data, e.g. "
                      "PreprocessOptions.scale)");
    }
  }
}

std::vector<Neighbour> knn_lists(const PointSet& data, const PointSet& queries, std::size_t k,
                                 Search search, bool exclude_self, std::size_t block_rows,
                                 StopToken stop) {
  std::vector<Neighbour> out(queries.rows * k);
  if (search == Search::tree)
    detail::knn_tree(data, queries, k, exclude_self, out, stop);
  else
    detail::knn_scan(data, queries, k, exclude_self, block_rows, out, stop);
  return out;
}

float length_of(double squared) {
  return static_cast<float>(std::sqrt(squared));
}

// i~j in the union graph when either lists the other; in the mutual graph when both do.
// Node i's list starts at lists[i * stride] (stride >= k: lists of a larger search, whose
// first k entries are the k nearest).
std::vector<Edge> knn_edges(const std::vector<Neighbour>& lists, std::size_t stride,
                            std::size_t nodes, std::size_t k, bool mutual) {
  std::vector<Edge> edges;
  edges.reserve(nodes * k);
  for (std::size_t i = 0; i < nodes; ++i)
    for (std::size_t a = 0; a < k; ++a) {
      const Neighbour& n = lists[i * stride + a];
      if (mutual) {
        const auto* other = &lists[static_cast<std::size_t>(n.index) * stride];
        const bool listed_back =
            std::any_of(other, other + k, [i](const Neighbour& m) { return m.index == i; });
        if (!listed_back || n.index < i) continue;  // keep each mutual pair once
      }
      edges.push_back({static_cast<NodeId>(i), n.index, length_of(n.squared)});
    }
  return edges;
}

// The position of the q-quantile in sorted order (the smallest value with at least q of the
// values at or below it); size >= 1.
std::size_t quantile_rank(std::size_t size, double q) {
  const std::size_t rank = static_cast<std::size_t>(std::ceil(q * static_cast<double>(size)));
  return rank == 0 ? 0 : std::min(size - 1, rank - 1);
}

float quantile(std::vector<float>& v, double q) {
  const std::size_t at = quantile_rank(v.size(), q);
  std::nth_element(v.begin(), v.begin() + static_cast<std::ptrdiff_t>(at), v.end());
  return v[at];
}

void summarise(const NeighbourGraph& g, GraphSummary& s) {
  s.nodes = g.nodes();
  s.directed_edges = g.directed_edges();
  s.undirected_edges = g.directed_edges() / 2;
  std::vector<std::size_t> degree(g.nodes());
  for (std::size_t v = 0; v < g.nodes(); ++v) degree[v] = g.degree(v);
  s.isolated_nodes = static_cast<std::size_t>(std::count(degree.begin(), degree.end(), 0u));
  if (!degree.empty()) {
    const auto [low, high] = std::minmax_element(degree.begin(), degree.end());
    s.degree_min = *low;
    s.degree_max = *high;
    const auto median = degree.begin() + static_cast<std::ptrdiff_t>((degree.size() - 1) / 2);
    std::nth_element(degree.begin(), median, degree.end());  // the lower median, as sorted
    s.degree_median = *median;
  }
  std::vector<float> lengths;
  lengths.reserve(s.undirected_edges);
  for (std::size_t v = 0; v < g.nodes(); ++v)
    for (auto e = g.offsets[v]; e < g.offsets[v + 1]; ++e)
      if (g.targets[static_cast<std::size_t>(e)] > v)
        lengths.push_back(g.lengths[static_cast<std::size_t>(e)]);
  if (lengths.empty()) return;
  s.length_min = *std::min_element(lengths.begin(), lengths.end());
  s.length_max = *std::max_element(lengths.begin(), lengths.end());
  // The median first: nth_element leaves the smaller values before it and the larger after,
  // so the 5% and 95% points are then sought in one side each (the same order statistics,
  // in about half the passes over the 57M lengths of a 10M-point graph).
  const std::size_t middle = quantile_rank(lengths.size(), 0.5);
  s.length_median = quantile(lengths, 0.5);
  const auto side_of = [&](double q) {
    const std::size_t at = quantile_rank(lengths.size(), q);
    if (at == middle) return s.length_median;
    const auto cut = lengths.begin() + static_cast<std::ptrdiff_t>(middle);
    const auto nth = lengths.begin() + static_cast<std::ptrdiff_t>(at);
    if (at < middle)
      std::nth_element(lengths.begin(), nth, cut);
    else
      std::nth_element(cut + 1, nth, lengths.end());
    return *nth;
  };
  s.length_p05 = side_of(0.05);
  s.length_p95 = side_of(0.95);
}

// keep_duplicates: every extra copy becomes a node of its own hanging off its group's first
// row by one epsilon edge; the graph among first rows is the merged one.
NeighbourGraph attach_copies(const NeighbourGraph& merged, const detail::DuplicateGroups& dup,
                             float epsilon) {
  const std::size_t n = dup.node_of_point.size();
  std::vector<Edge> edges;
  edges.reserve(merged.directed_edges() / 2 + dup.extra_rows);
  for (std::size_t v = 0; v < merged.nodes(); ++v)
    for (auto e = merged.offsets[v]; e < merged.offsets[v + 1]; ++e) {
      const NodeId w = merged.targets[static_cast<std::size_t>(e)];
      if (w > v)
        edges.push_back({static_cast<NodeId>(dup.point_of_node[v]),
                         static_cast<NodeId>(dup.point_of_node[w]),
                         merged.lengths[static_cast<std::size_t>(e)]});
    }
  for (std::size_t r = 0; r < n; ++r) {
    const std::size_t first = dup.point_of_node[dup.node_of_point[r]];
    if (first != r) edges.push_back({static_cast<NodeId>(first), static_cast<NodeId>(r), epsilon});
  }
  return detail::symmetric_csr(n, edges);
}

}  // namespace

const char* search_name(Search search) {
  switch (search) {
    case Search::automatic:
      return "automatic";
    case Search::tree:
      return "tree";
    case Search::scan:
      return "scan";
  }
  return "?";
}

Search choose_search(Search requested, std::size_t n, std::size_t d) {
  if (requested != Search::automatic) return requested;
  // k-d trees pay off when N >> 2^d and stop helping near 20 dimensions (DESIGN.md 5).
  if (d <= 16 && static_cast<double>(n) >= 16.0 * std::ldexp(1.0, static_cast<int>(d)))
    return Search::tree;
  return Search::scan;
}

void GraphOptions::validate(std::size_t points) const {
  if (const auto* r = std::get_if<WithinRadius>(&neighbourhood)) {
    if (!std::isfinite(r->radius) || !(r->radius > 0.0))
      throw OptionError("WithinRadius.radius",
                        "must be a positive finite number, got " + std::to_string(r->radius));
  } else {
    const std::size_t k = std::get<NearestK>(neighbourhood).k;
    if (k < 1) throw OptionError("NearestK.k", "must be at least 1, got 0");
    if (k >= points)
      throw OptionError("NearestK.k", "must be less than the number of points (" +
                                          std::to_string(points) + "), got " + std::to_string(k));
  }
  if (block_rows < 1) throw OptionError("GraphOptions.block_rows", "must be at least 1, got 0");
  if (!(duplicate_epsilon >= 0.0f) || !std::isfinite(duplicate_epsilon))
    throw OptionError("GraphOptions.duplicate_epsilon",
                      "must be >= 0 (0 = automatic), got " + std::to_string(duplicate_epsilon));
}

void KnnOptions::validate(std::size_t available) const {
  if (k < 1) throw OptionError("KnnOptions.k", "must be at least 1, got 0");
  if (k > available)
    throw OptionError("KnnOptions.k", "must be at most " + std::to_string(available) +
                                          " (the data rows available), got " + std::to_string(k));
  if (block_rows < 1) throw OptionError("KnnOptions.block_rows", "must be at least 1, got 0");
}

KnnResult exact_knn(const PointSet& data, const PointSet& queries, const KnnOptions& options,
                    StopToken stop) {
  if (queries.cols != data.cols)
    throw DataError("queries: " + std::to_string(queries.cols) + " columns, the data have " +
                    std::to_string(data.cols));
  if (options.exclude_self && queries.rows != data.rows)
    throw InternalError("exact_knn: exclude_self needs the data themselves as queries");
  options.validate(data.rows - (options.exclude_self && data.rows > 0 ? 1 : 0));
  require_finite(data, "data");
  if (&queries != &data) require_finite(queries, "queries");
  KnnResult r;
  r.k = options.k;
  r.summary.queries = queries.rows;
  r.summary.search_used = choose_search(options.search, data.rows, data.cols);
  const auto lists = knn_lists(data, queries, options.k, r.summary.search_used,
                               options.exclude_self, options.block_rows, stop);
  r.index.resize(lists.size());
  r.distance.resize(lists.size());
  for (std::size_t i = 0; i < lists.size(); ++i) {
    r.index[i] = lists[i].index;
    r.distance[i] = length_of(lists[i].squared);
  }
  return r;
}

namespace detail {
struct SearchLists {
  GraphOptions options;  // as searched
  std::size_t points = 0;
  DuplicateGroups dup;
  Search search_used = Search::tree;
  std::size_t k = 0;           // k-nearest: entries per node in `knn`
  std::vector<Neighbour> knn;  // nodes x k, closer() order
  RadiusLists within;          // radius: per node, by index
  double seconds = 0.0;
};
}  // namespace detail

const GraphOptions& NeighbourSearch::options() const {
  return lists_->options;
}
std::size_t NeighbourSearch::points() const {
  return lists_->points;
}
std::size_t NeighbourSearch::nodes() const {
  return lists_->dup.point_of_node.size();
}
double NeighbourSearch::seconds() const {
  return lists_->seconds;
}

namespace {

std::shared_ptr<detail::SearchLists> run_search(const PointSet& points, const GraphOptions& options,
                                                StopToken stop) {
  const auto started = std::chrono::steady_clock::now();
  options.validate(points.rows);
  if (points.cols == 0) throw DataError("points: no columns");
  require_finite(points, "points");
  auto out = std::make_shared<detail::SearchLists>();
  out->options = options;
  out->points = points.rows;
  out->dup = detail::find_duplicates(points, stop);
  const auto& dup = out->dup;
  const std::size_t distinct = dup.point_of_node.size();
  const auto* within = std::get_if<WithinRadius>(&options.neighbourhood);
  const std::size_t k = within ? 0 : std::get<NearestK>(options.neighbourhood).k;
  if (!within && k >= distinct)
    throw DataError("NearestK.k: " + std::to_string(k) + " needs at least " +
                    std::to_string(k + 1) + " distinct points, the data have " +
                    std::to_string(distinct) + " (" + std::to_string(dup.extra_rows) +
                    " rows repeat others)");
  PointSet unique_rows;
  if (dup.extra_rows > 0) unique_rows = detail::select_rows(points, dup.point_of_node);
  const PointSet& nodes = dup.extra_rows > 0 ? unique_rows : points;
  out->search_used = choose_search(options.search, nodes.rows, nodes.cols);
  const Search used = out->search_used;
  if (within) {
    const double radius = within->radius;
    out->within = used == Search::tree
                      ? detail::radius_tree(nodes, nodes, radius, true, stop)
                      : detail::radius_scan(nodes, nodes, radius, true, options.block_rows, stop);
    const bool joined = std::any_of(out->within.begin(), out->within.end(),
                                    [](const auto& list) { return !list.empty(); });
    if (!joined && nodes.rows > 1) {
      const auto nearest = knn_lists(nodes, nodes, 1, used, true, options.block_rows, stop);
      const auto closest = std::min_element(nearest.begin(), nearest.end(), detail::closer);
      throw DataError("WithinRadius.radius: no two points lie within " + std::to_string(radius) +
                      "; the closest pair is " + std::to_string(std::sqrt(closest->squared)) +
                      " apart");
    }
  } else {
    out->k = k;
    out->knn = knn_lists(nodes, nodes, k, used, true, options.block_rows, stop);
  }
  out->seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - started).count();
  return out;
}

}  // namespace

NeighbourSearch search_neighbours(const PointSet& points, const GraphOptions& options,
                                  StopToken stop) {
  const ProgressStep step = stop.step("graph", points.rows);
  NeighbourSearch search;
  search.lists_ = run_search(points, options, stop);
  return search;
}

namespace {

// The graph of `setting` from `kept`. `owned`: the same lists when the caller holds the only
// copy; they are released once the edges are made, so the graph stage's peak stays lists or
// CSR, never both (the 10M-point graph's lists alone are 1.6 GB).
GraphResult derive_graph(const detail::SearchLists& kept, const Neighbourhood& setting,
                         StopToken stop, detail::SearchLists* owned) {
  const auto started = std::chrono::steady_clock::now();
  const GraphOptions& options = kept.options;
  const auto* within = std::get_if<WithinRadius>(&setting);
  const auto* searched_within = std::get_if<WithinRadius>(&options.neighbourhood);
  if (within) {
    if (!searched_within)
      throw OptionError("WithinRadius.radius", "the kept search is a k-nearest one");
    if (!(within->radius > 0.0) || within->radius > searched_within->radius)
      throw OptionError("WithinRadius.radius", "must be positive and at most the searched " +
                                                   std::to_string(searched_within->radius) +
                                                   ", got " + std::to_string(within->radius));
  } else {
    const std::size_t k = std::get<NearestK>(setting).k;
    if (searched_within) throw OptionError("NearestK.k", "the kept search is a radius one");
    if (k < 1 || k > kept.k)
      throw OptionError("NearestK.k", "must be from 1 to the searched " + std::to_string(kept.k) +
                                          ", got " + std::to_string(k));
  }
  stop.check("graph");
  GraphResult result;
  GraphSummary& s = result.summary;
  const auto& dup = kept.dup;
  s.duplicate_groups = dup.groups_with_copies;
  s.duplicate_rows = dup.extra_rows;
  s.search_used = kept.search_used;
  const std::size_t nodes = dup.point_of_node.size();

  std::vector<Edge> edges;
  if (within) {
    const double r2 = within->radius * within->radius;  // the searches' inclusive rule
    for (std::size_t i = 0; i < kept.within.size(); ++i)
      for (const Neighbour& n : kept.within[i])
        if (n.index > i && n.squared <= r2)
          edges.push_back({static_cast<NodeId>(i), n.index, length_of(n.squared)});
  } else {
    const std::size_t k = std::get<NearestK>(setting).k;
    edges = knn_edges(kept.knn, kept.k, nodes, k, options.mutual);
    if (k >= 2) {
      try {
        // The distances as exact_knn rounds them, so a separate search gives the same value.
        result.dimension = levina_bickel_lists(nodes, k, [&](std::size_t i, std::size_t j) {
          return static_cast<double>(length_of(kept.knn[i * kept.k + j].squared));
        });
      } catch (const DataError& e) {
        s.warnings.push_back(std::string("no intrinsic dimension estimate: ") + e.what());
      }
    }
  }
  if (owned) {
    owned->knn = {};
    owned->within = {};
  }
  NeighbourGraph merged = detail::symmetric_csr(nodes, edges);
  edges = {};

  if (options.keep_duplicates && dup.extra_rows > 0) {
    float epsilon = options.duplicate_epsilon;
    if (epsilon == 0.0f) {
      std::vector<float> positive;
      for (float l : merged.lengths)
        if (l > 0.0f) positive.push_back(l);
      epsilon = positive.empty() ? 1e-6f : 1e-6f * quantile(positive, 0.5);
    }
    result.graph = attach_copies(merged, dup, epsilon);
    result.node_of_point.resize(kept.points);
    result.point_of_node.resize(kept.points);
    for (std::size_t r = 0; r < kept.points; ++r) {
      result.node_of_point[r] = static_cast<NodeId>(r);
      result.point_of_node[r] = r;
    }
    s.warnings.push_back(std::to_string(dup.extra_rows) + " rows repeat an earlier row (" +
                         std::to_string(dup.groups_with_copies) +
                         " groups); kept, joined by edges of length " + std::to_string(epsilon));
  } else {
    result.graph = std::move(merged);
    result.node_of_point = dup.node_of_point;
    result.point_of_node = dup.point_of_node;
    if (dup.extra_rows > 0)
      s.warnings.push_back(std::to_string(dup.extra_rows) + " rows repeat an earlier row (" +
                           std::to_string(dup.groups_with_copies) +
                           " groups); merged into one node each");
  }
  if (dup.equal_after_narrowing > 0)
    s.warnings.push_back(std::to_string(dup.equal_after_narrowing) +
                         " rows equal an earlier row in float32 but differ in the input; kept "
                         "as nodes of their own at distance 0");
  summarise(result.graph, s);
  if (s.isolated_nodes > 0)
    s.warnings.push_back(std::to_string(s.isolated_nodes) + " of " + std::to_string(s.nodes) +
                         " nodes have no edge (" +
                         (within ? "radius too small for them" : "mutual graph") + ")");
  s.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - started).count();
  return result;
}

}  // namespace

GraphResult graph_from_search(const NeighbourSearch& search, const Neighbourhood& setting,
                              StopToken stop) {
  return derive_graph(search.lists(), setting, stop, nullptr);
}

GraphResult build_neighbour_graph(const PointSet& points, const GraphOptions& options,
                                  StopToken stop) {
  const auto started = std::chrono::steady_clock::now();
  // Units: query rows searched, one per distinct point (fewer than the rows with copies).
  const ProgressStep step = stop.step("graph", points.rows);
  auto lists = run_search(points, options, stop);
  GraphResult result = derive_graph(*lists, options.neighbourhood, stop, lists.get());
  result.summary.seconds =
      std::chrono::duration<double>(std::chrono::steady_clock::now() - started).count();
  return result;
}

}  // namespace unfurl
