#include "engine/detail/csr.hpp"

#include <algorithm>
#include <atomic>
#include <cstdint>
#include <numeric>

#include "engine/detail/parallel_chunks.hpp"

namespace unfurl::detail {

NeighbourGraph symmetric_csr(std::size_t nodes, const std::vector<Edge>& edges) {
  // Counting and scattering run in parallel with atomic counters, so entries land in each row
  // in an order that depends on the threads; the sort below by (target, edge position) makes
  // the rows identical whatever that order was. On the million-point Swiss roll the serial
  // version of these two loops took about a sixth of the whole graph stage.
  constexpr std::size_t kChunk = 1 << 16;
  std::vector<std::int64_t> start(nodes + 1, 0);
  parallel_chunks(edges.size(), kChunk, {}, "graph", [&](std::size_t first, std::size_t last) {
    for (std::size_t i = first; i < last; ++i) {
      const Edge& e = edges[i];
      if (e.from == e.to) continue;
      std::atomic_ref<std::int64_t>(start[e.from + 1]).fetch_add(1, std::memory_order_relaxed);
      std::atomic_ref<std::int64_t>(start[e.to + 1]).fetch_add(1, std::memory_order_relaxed);
    }
  });
  std::partial_sum(start.begin(), start.end(), start.begin());
  // Entries carry the edge's position so that "first length wins" survives the sort.
  struct Entry {
    NodeId target;
    float length;
    std::size_t order;
  };
  std::vector<Entry> entries(static_cast<std::size_t>(start.back()));
  std::vector<std::int64_t> cursor(start.begin(), start.end() - 1);
  parallel_chunks(edges.size(), kChunk, {}, "graph", [&](std::size_t first, std::size_t last) {
    for (std::size_t i = first; i < last; ++i) {
      const Edge& e = edges[i];
      if (e.from == e.to) continue;
      const auto at_from =
          std::atomic_ref<std::int64_t>(cursor[e.from]).fetch_add(1, std::memory_order_relaxed);
      const auto at_to =
          std::atomic_ref<std::int64_t>(cursor[e.to]).fetch_add(1, std::memory_order_relaxed);
      entries[static_cast<std::size_t>(at_from)] = {e.to, e.length, i};
      entries[static_cast<std::size_t>(at_to)] = {e.from, e.length, i};
    }
  });
  std::vector<std::int64_t> kept(nodes, 0);
  parallel_chunks(nodes, 4096, {}, "graph", [&](std::size_t first, std::size_t last) {
    for (std::size_t v = first; v < last; ++v) {
      auto b = entries.begin() + start[v], e = entries.begin() + start[v + 1];
      const auto before = [](const Entry& x, const Entry& y) {
        return x.target < y.target || (x.target == y.target && x.order < y.order);
      };
      if (e - b > 32) {
        std::sort(b, e, before);
      } else {  // kNN rows are short: a plain insertion sort beats std::sort's calls
        for (auto i = b + 1; i < e; ++i) {
          const Entry x = *i;
          auto j = i;
          for (; j > b && before(x, *(j - 1)); --j) *j = *(j - 1);
          *j = x;
        }
      }
      kept[v] =
          std::unique(b, e, [](const Entry& x, const Entry& y) { return x.target == y.target; }) -
          b;
    }
  });
  NeighbourGraph g;
  g.offsets.assign(nodes + 1, 0);
  for (std::size_t v = 0; v < nodes; ++v) g.offsets[v + 1] = g.offsets[v] + kept[v];
  g.targets.resize(static_cast<std::size_t>(g.offsets.back()));
  g.lengths.resize(g.targets.size());
  parallel_chunks(nodes, 4096, {}, "graph", [&](std::size_t first, std::size_t last) {
    for (std::size_t v = first; v < last; ++v)
      for (std::int64_t j = 0; j < kept[v]; ++j) {
        const Entry& x = entries[static_cast<std::size_t>(start[v] + j)];
        g.targets[static_cast<std::size_t>(g.offsets[v] + j)] = x.target;
        g.lengths[static_cast<std::size_t>(g.offsets[v] + j)] = x.length;
      }
  });
  return g;
}

}  // namespace unfurl::detail
