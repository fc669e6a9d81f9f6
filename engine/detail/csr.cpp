#include "engine/detail/csr.hpp"

#include <algorithm>
#include <cstdint>
#include <memory>

#include "engine/detail/parallel_chunks.hpp"
#include "engine/parallel.hpp"
#include "engine/row_storage.hpp"

namespace unfurl::detail {
namespace {

struct Entry {
  NodeId target;
  float length;
};

// Rows [first, last) belong to one task. Every task reads all the edges and keeps the
// endpoints in its own rows: no two tasks write one row, so counting and scattering need no
// atomics, and a row receives its entries in edge order however many tasks there are. Atomic
// increments on random rows were a third of the 1M Swiss roll's graph stage on this machine's
// Xeon (a locked instruction lets no other cache miss overlap it); reading the edges once per
// task is a sequential stream and cheap beside that.
struct RowRanges {
  std::size_t tasks;
  std::size_t per_task;
  std::size_t first(std::size_t t, std::size_t nodes) const {
    return std::min(nodes, t * per_task);
  }
};

RowRanges row_ranges(std::size_t nodes) {
  // More tasks than threads only multiply the reads of the edges: each task reads them all.
  constexpr std::size_t kMaxTasks = 16;
  const auto threads = static_cast<std::size_t>(std::max(1, resolve_threads(0)));
  const std::size_t tasks = std::clamp<std::size_t>(threads, 1, kMaxTasks);
  return {tasks, (nodes + tasks - 1) / tasks};
}

// Insertion sort (stable) for the short rows of a kNN graph, a stable sort otherwise: equal
// targets keep edge order, so "first length wins" below keeps the earliest edge.
void sort_row(Entry* b, Entry* e) {
  const auto before = [](const Entry& x, const Entry& y) { return x.target < y.target; };
  if (e - b > 32) {
    std::stable_sort(b, e, before);
    return;
  }
  for (Entry* i = b + 1; i < e; ++i) {
    const Entry x = *i;
    Entry* j = i;
    for (; j > b && before(x, *(j - 1)); --j) *j = *(j - 1);
    *j = x;
  }
}

}  // namespace

NeighbourGraph symmetric_csr(std::size_t nodes, const std::vector<Edge>& edges) {
  const RowRanges ranges = row_ranges(nodes);
  std::vector<std::int64_t> start(nodes + 1, 0);
  parallel_chunks(ranges.tasks, 1, {}, "graph", [&](std::size_t t, std::size_t) {
    const std::size_t lo = ranges.first(t, nodes), hi = ranges.first(t + 1, nodes);
    for (const Edge& e : edges) {
      if (e.from == e.to) continue;
      if (e.from >= lo && e.from < hi) ++start[e.from + 1];
      if (e.to >= lo && e.to < hi) ++start[e.to + 1];
    }
  });
  for (std::size_t v = 0; v < nodes; ++v) start[v + 1] += start[v];
  // Left uninitialised: the scatter writes every entry, and its first touch of each page is
  // then spread over the tasks instead of one thread zeroing the whole array first.
  const auto total = static_cast<std::size_t>(start.back());
  const std::unique_ptr<Entry[]> entries = std::make_unique_for_overwrite<Entry[]>(total);
  std::vector<std::int64_t> cursor(start.begin(), start.end() - 1);
  parallel_chunks(ranges.tasks, 1, {}, "graph", [&](std::size_t t, std::size_t) {
    const std::size_t lo = ranges.first(t, nodes), hi = ranges.first(t + 1, nodes);
    for (const Edge& e : edges) {
      if (e.from == e.to) continue;
      if (e.from >= lo && e.from < hi)
        entries[static_cast<std::size_t>(cursor[e.from]++)] = {e.to, e.length};
      if (e.to >= lo && e.to < hi)
        entries[static_cast<std::size_t>(cursor[e.to]++)] = {e.from, e.length};
    }
  });
  std::vector<std::int64_t> kept(nodes, 0);
  parallel_chunks(nodes, 4096, {}, "graph", [&](std::size_t first, std::size_t last) {
    for (std::size_t v = first; v < last; ++v) {
      Entry* b = entries.get() + start[v];
      Entry* e = entries.get() + start[v + 1];
      sort_row(b, e);
      kept[v] =
          std::unique(b, e, [](const Entry& x, const Entry& y) { return x.target == y.target; }) -
          b;
    }
  });
  NeighbourGraph g;
  g.offsets.assign(nodes + 1, 0);
  for (std::size_t v = 0; v < nodes; ++v) g.offsets[v + 1] = g.offsets[v] + kept[v];
  // Huge pages for the arrays the shortest-path searches walk (engine/row_storage.hpp).
  reserve_huge_pages(g.targets, static_cast<std::size_t>(g.offsets.back()));
  reserve_huge_pages(g.lengths, static_cast<std::size_t>(g.offsets.back()));
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
