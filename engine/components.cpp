#include "engine/components.hpp"

#include <algorithm>
#include <atomic>
#include <chrono>
#include <numeric>
#include <tuple>

#include "engine/detail/csr.hpp"
#include "engine/detail/parallel_chunks.hpp"
#include "engine/error.hpp"
#include "engine/neighbours.hpp"

namespace unfurl {
namespace {

class UnionFind {
 public:
  explicit UnionFind(std::size_t n) : parent_(n), size_(n, 1) {
    std::iota(parent_.begin(), parent_.end(), std::size_t{0});
  }
  std::size_t find(std::size_t v) {
    while (parent_[v] != v) v = parent_[v] = parent_[parent_[v]];  // path halving
    return v;
  }
  bool unite(std::size_t a, std::size_t b) {
    a = find(a);
    b = find(b);
    if (a == b) return false;
    if (size_[a] < size_[b]) std::swap(a, b);
    parent_[b] = a;
    size_[a] += size_[b];
    return true;
  }

 private:
  std::vector<std::size_t> parent_, size_;
};

// Sets that hold at most this many nodes find their nearest outside point among their
// size + 1 nearest neighbours in one shared query; larger ones query the rest directly.
constexpr std::size_t kSmallSet = 32;

struct Candidate {
  float length;
  NodeId a, b;  // a < b
  bool operator<(const Candidate& o) const {
    return std::tie(length, a, b) < std::tie(o.length, o.a, o.b);
  }
};

Candidate make_candidate(NodeId p, NodeId q, float length) {
  return {length, std::min(p, q), std::max(p, q)};
}

PointSet rows_of(const PointSet& points, const std::vector<NodeId>& rows) {
  PointSet out(rows.size(), points.cols);
  for (std::size_t i = 0; i < rows.size(); ++i)
    std::copy_n(points.row(rows[i]), points.cols, out.row(i));
  return out;
}

// One Boruvka round: for every set but the largest, its shortest edge to any other set.
std::vector<Candidate> shortest_outgoing(const PointSet& points,
                                         const std::vector<std::size_t>& set_of,
                                         const std::vector<std::vector<NodeId>>& members,
                                         std::size_t largest, StopToken stop) {
  std::vector<Candidate> best(members.size(), Candidate{0, 0, 0});
  std::vector<bool> found(members.size(), false);
  auto offer = [&](std::size_t s, Candidate c) {
    if (!found[s] || c < best[s]) best[s] = c, found[s] = true;
  };
  std::vector<NodeId> small;
  std::size_t widest = 0;
  for (std::size_t s = 0; s < members.size(); ++s) {
    if (s == largest) continue;
    if (members[s].size() <= kSmallSet) {
      small.insert(small.end(), members[s].begin(), members[s].end());
      widest = std::max(widest, members[s].size());
      continue;
    }
    std::vector<NodeId> rest;
    for (std::size_t v = 0; v < points.rows; ++v)
      if (set_of[v] != s) rest.push_back(static_cast<NodeId>(v));
    const auto nn = exact_knn(rows_of(points, rest), rows_of(points, members[s]), {.k = 1}, stop);
    for (std::size_t i = 0; i < members[s].size(); ++i)
      offer(s, make_candidate(members[s][i], rest[nn.index[i]], nn.distance[i]));
  }
  if (!small.empty()) {
    const std::size_t k = std::min(points.rows, widest + 1);
    const auto nn = exact_knn(points, rows_of(points, small), {.k = k}, stop);
    for (std::size_t i = 0; i < small.size(); ++i) {
      const std::size_t s = set_of[small[i]];
      for (std::size_t a = 0; a < k; ++a) {
        const NodeId q = nn.index[i * k + a];
        if (set_of[q] == s) continue;
        offer(s, make_candidate(small[i], q, nn.distance[i * k + a]));
        break;
      }
    }
  }
  std::vector<Candidate> out;
  for (std::size_t s = 0; s < members.size(); ++s)
    if (found[s]) out.push_back(best[s]);
  std::sort(out.begin(), out.end());
  return out;
}

std::vector<BridgeEdge> bridge_edges(const PointSet& points, const ComponentLabels& labels,
                                     StopToken stop) {
  UnionFind sets(labels.count);
  std::size_t remaining = labels.count;
  std::vector<BridgeEdge> added;
  while (remaining > 1) {
    stop.check("components");
    // Renumber the current sets densely; set_of maps nodes to them.
    std::vector<std::size_t> dense(labels.count, SIZE_MAX), set_of(points.rows);
    std::vector<std::vector<NodeId>> members;
    for (std::size_t v = 0; v < points.rows; ++v) {
      const std::size_t root = sets.find(labels.label[v]);
      if (dense[root] == SIZE_MAX) dense[root] = members.size(), members.emplace_back();
      set_of[v] = dense[root];
      members[dense[root]].push_back(static_cast<NodeId>(v));
    }
    std::size_t largest = 0;
    for (std::size_t s = 1; s < members.size(); ++s)
      if (members[s].size() > members[largest].size()) largest = s;
    for (const Candidate& c : shortest_outgoing(points, set_of, members, largest, stop))
      if (sets.unite(labels.label[c.a], labels.label[c.b])) {
        added.push_back({c.a, c.b, c.length});
        --remaining;
      }
  }
  std::sort(added.begin(), added.end(), [](const BridgeEdge& x, const BridgeEdge& y) {
    return std::tie(x.length, x.from, x.to) < std::tie(y.length, y.from, y.to);
  });
  return added;
}

NeighbourGraph with_edges(const NeighbourGraph& g, const std::vector<BridgeEdge>& extra) {
  std::vector<detail::Edge> edges;
  edges.reserve(g.directed_edges() / 2 + extra.size());
  for (std::size_t v = 0; v < g.nodes(); ++v)
    for (auto e = g.offsets[v]; e < g.offsets[v + 1]; ++e)
      if (g.targets[static_cast<std::size_t>(e)] > v)
        edges.push_back({static_cast<NodeId>(v), g.targets[static_cast<std::size_t>(e)],
                         g.lengths[static_cast<std::size_t>(e)]});
  for (const BridgeEdge& b : extra) edges.push_back({b.from, b.to, b.length});
  return detail::symmetric_csr(g.nodes(), edges);
}

NeighbourGraph induced(const NeighbourGraph& g, const std::vector<NodeId>& old_of_new) {
  std::vector<NodeId> new_of_old(g.nodes(), UINT32_MAX);
  for (std::size_t i = 0; i < old_of_new.size(); ++i)
    new_of_old[old_of_new[i]] = static_cast<NodeId>(i);
  NeighbourGraph out;
  out.offsets.assign(old_of_new.size() + 1, 0);
  for (std::size_t i = 0; i < old_of_new.size(); ++i) {
    const NodeId v = old_of_new[i];
    for (auto e = g.offsets[v]; e < g.offsets[v + 1]; ++e) {
      const NodeId w = new_of_old[g.targets[static_cast<std::size_t>(e)]];
      if (w == UINT32_MAX) continue;
      out.targets.push_back(w);  // ascending: renumbering keeps the old order
      out.lengths.push_back(g.lengths[static_cast<std::size_t>(e)]);
    }
    out.offsets[i + 1] = static_cast<std::int64_t>(out.targets.size());
  }
  return out;
}

}  // namespace

const char* component_policy_name(ComponentPolicy policy) {
  switch (policy) {
    case ComponentPolicy::fail:
      return "fail";
    case ComponentPolicy::largest:
      return "largest";
    case ComponentPolicy::bridge:
      return "bridge";
  }
  return "?";
}

void ComponentOptions::validate() const {
  if (sizes_in_message < 1)
    throw OptionError("ComponentOptions.sizes_in_message", "must be at least 1, got 0");
}

ComponentLabels connected_components(const NeighbourGraph& graph) {
  const std::size_t n = graph.nodes();
  // Concurrent union-find: a root is only ever linked below a smaller root (by compare and
  // exchange), so parents only decrease, every root ends as its component's smallest node
  // whatever the threads' interleaving, and path halving may run beside the links. Each
  // undirected edge is stored both ways (graph.hpp), so one direction suffices.
  std::vector<std::uint32_t> parent(n);
  detail::parallel_chunks(n, 1 << 16, {}, "components", [&](std::size_t b, std::size_t e) {
    for (std::size_t v = b; v < e; ++v) parent[v] = static_cast<std::uint32_t>(v);
  });
  const auto find = [&](std::uint32_t v) {
    for (;;) {
      std::atomic_ref<std::uint32_t> link(parent[v]);
      const std::uint32_t up = link.load(std::memory_order_relaxed);
      if (up == v) return v;
      const std::uint32_t above =
          std::atomic_ref<std::uint32_t>(parent[up]).load(std::memory_order_relaxed);
      if (above != up) link.store(above, std::memory_order_relaxed);  // path halving
      v = above;
    }
  };
  detail::parallel_chunks(n, 1 << 14, {}, "components", [&](std::size_t b, std::size_t e) {
    for (std::size_t v = b; v < e; ++v)
      for (auto k = graph.offsets[v]; k < graph.offsets[v + 1]; ++k) {
        std::uint32_t x = static_cast<std::uint32_t>(v),
                      y = graph.targets[static_cast<std::size_t>(k)];
        if (y <= x) continue;
        for (;;) {
          x = find(x);
          y = find(y);
          if (x == y) break;
          if (x < y) std::swap(x, y);  // link the larger root below the smaller
          std::uint32_t expected = x;
          if (std::atomic_ref<std::uint32_t>(parent[x]).compare_exchange_strong(
                  expected, y, std::memory_order_relaxed))
            break;
        }
      }
  });
  // Roots are the smallest nodes of their components, so in node order a root comes before
  // its members and components get their numbers by smallest node.
  detail::parallel_chunks(n, 1 << 16, {}, "components", [&](std::size_t b, std::size_t e) {
    for (std::size_t v = b; v < e; ++v) parent[v] = find(static_cast<std::uint32_t>(v));
  });
  ComponentLabels c;
  c.label.resize(n);
  for (std::size_t v = 0; v < n; ++v) {
    if (parent[v] == v) {
      c.label[v] = static_cast<std::uint32_t>(c.count++);
      c.size.push_back(0);
    } else {
      c.label[v] = c.label[parent[v]];
    }
    ++c.size[c.label[v]];
  }
  return c;
}

ComponentResult make_connected(const NeighbourGraph& graph, const ComponentOptions& options,
                               const PointSet& node_points, StopToken stop) {
  const auto started = std::chrono::steady_clock::now();
  options.validate();
  ComponentResult r;
  const ComponentLabels labels = connected_components(graph);
  auto& s = r.summary;
  s.components = labels.count;
  s.sizes = labels.size;
  std::sort(s.sizes.begin(), s.sizes.end(), std::greater<>());
  auto finish = [&] {
    s.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - started).count();
    return std::move(r);
  };
  auto identity = [&] { r.old_of_new = Numbering::identity(graph.nodes()); };
  if (labels.count <= 1) {
    r.unchanged = &graph;
    identity();
    return finish();
  }
  switch (options.policy) {
    case ComponentPolicy::fail: {
      std::string sizes;
      const std::size_t shown = std::min(options.sizes_in_message, s.sizes.size());
      for (std::size_t i = 0; i < shown; ++i) sizes += (i ? ", " : "") + std::to_string(s.sizes[i]);
      if (shown < s.sizes.size())
        sizes += " and " + std::to_string(s.sizes.size() - shown) + " more";
      throw DataError("graph: not connected, " + std::to_string(labels.count) +
                      " components of sizes " + sizes +
                      "; use a larger NearestK.k or WithinRadius.radius, or "
                      "ComponentOptions.policy largest or bridge");
    }
    case ComponentPolicy::largest: {
      std::size_t keep = 0;  // labels are numbered by smallest node, so ties go to the first
      for (std::size_t c = 1; c < labels.count; ++c)
        if (labels.size[c] > labels.size[keep]) keep = c;
      std::vector<NodeId> kept;
      for (std::size_t v = 0; v < graph.nodes(); ++v)
        (labels.label[v] == keep ? kept : r.dropped).push_back(static_cast<NodeId>(v));
      r.graph = induced(graph, kept);
      r.old_of_new = Numbering(std::move(kept), graph.nodes());
      s.dropped_nodes = r.dropped.size();
      s.warnings.push_back("kept the largest of " + std::to_string(labels.count) + " components (" +
                           std::to_string(r.old_of_new.size()) + " nodes); dropped " +
                           std::to_string(r.dropped.size()) + " nodes");
      return finish();
    }
    case ComponentPolicy::bridge: {
      if (node_points.rows != graph.nodes())
        throw OptionError("ComponentOptions.policy",
                          "bridge needs the coordinates of all " + std::to_string(graph.nodes()) +
                              " nodes, got " + std::to_string(node_points.rows) + " rows");
      r.bridges = bridge_edges(node_points, labels, stop);
      r.graph = with_edges(graph, r.bridges);
      identity();
      s.bridges = r.bridges.size();
      s.warnings.push_back("joined " + std::to_string(labels.count) + " components by " +
                           std::to_string(r.bridges.size()) + " bridge edges, the longest " +
                           std::to_string(r.bridges.back().length));
      return finish();
    }
  }
  throw InternalError("make_connected: unknown policy");
}

std::vector<std::size_t> dropped_rows(std::span<const NodeId> node_of_point,
                                      const ComponentResult& result) {
  std::vector<std::size_t> rows;
  for (std::size_t r = 0; r < node_of_point.size(); ++r)
    if (std::binary_search(result.dropped.begin(), result.dropped.end(), node_of_point[r]))
      rows.push_back(r);
  return rows;
}

}  // namespace unfurl
