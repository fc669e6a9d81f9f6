// Duplicates by hashing rows and confirming equal hashes coordinate by coordinate, so the
// cost is one pass plus a sort of N 64-bit keys, whatever d is.
#include "engine/detail/duplicates.hpp"

#include "engine/detail/parallel_chunks.hpp"
#include "engine/detail/parallel_sort.hpp"

#include <algorithm>
#include <cstdint>
#include <cstring>

namespace unfurl::detail {
namespace {

std::uint64_t hash_row(const float* row, std::size_t d) {
  std::uint64_t h = 0xcbf29ce484222325ull;  // FNV-1a over the coordinate bits (FNV spec)
  for (std::size_t j = 0; j < d; ++j) {
    const float v = row[j] + 0.0f;  // -0 + 0 is +0, so both zeros hash alike
    std::uint32_t bits;
    std::memcpy(&bits, &v, sizeof bits);
    h = (h ^ bits) * 0x100000001b3ull;
  }
  return h;
}

bool same_row(const float* a, const float* b, std::size_t d) {
  for (std::size_t j = 0; j < d; ++j)
    if (!(a[j] == b[j])) return false;
  return true;
}

}  // namespace

DuplicateGroups find_duplicates(const PointSet& points, StopToken stop) {
  const std::size_t n = points.rows, d = points.cols;
  std::vector<std::pair<std::uint64_t, std::size_t>> keys(n);
  parallel_chunks(n, 65536, stop, "graph", [&](std::size_t b, std::size_t e) {
    for (std::size_t i = b; i < e; ++i) keys[i] = {hash_row(points.row(i), d), i};
  });
  parallel_sort(keys);  // the row index makes every key distinct
  std::vector<std::size_t> first(n);
  for (std::size_t i = 0; i < n; ++i) first[i] = i;
  std::vector<std::size_t> firsts;  // distinct rows met so far in the current run
  const bool keyed = points.row_keys.size() == n;
  std::size_t equal_after_narrowing = 0;
  for (std::size_t b = 0; b < n;) {
    std::size_t e = b + 1;
    while (e < n && keys[e].first == keys[b].first) ++e;
    // Within a run of equal hashes (rows ascending), match each row to the earliest equal one.
    firsts.assign(1, keys[b].second);
    for (std::size_t i = b + 1; i < e; ++i) {
      const std::size_t r = keys[i].second;
      bool equal_floats = false;
      const auto match = std::find_if(firsts.begin(), firsts.end(), [&](std::size_t s) {
        if (!same_row(points.row(r), points.row(s), d)) return false;
        equal_floats = true;
        return !keyed || points.row_keys[r] == points.row_keys[s];
      });
      if (match != firsts.end()) {
        first[r] = *match;
      } else {
        firsts.push_back(r);
        if (equal_floats) ++equal_after_narrowing;
      }
    }
    b = e;
  }
  DuplicateGroups g;
  g.equal_after_narrowing = equal_after_narrowing;
  g.node_of_point.resize(n);
  std::vector<std::size_t> copies;
  for (std::size_t i = 0; i < n; ++i) {
    if (first[i] == i) {
      g.node_of_point[i] = static_cast<NodeId>(g.point_of_node.size());
      g.point_of_node.push_back(i);
      copies.push_back(0);
    } else {
      g.node_of_point[i] = g.node_of_point[first[i]];
      if (copies[g.node_of_point[i]]++ == 0) ++g.groups_with_copies;
      ++g.extra_rows;
    }
  }
  return g;
}

PointSet select_rows(const PointSet& points, const std::vector<std::size_t>& rows) {
  PointSet out(rows.size(), points.cols);
  for (std::size_t i = 0; i < rows.size(); ++i)
    std::copy_n(points.row(rows[i]), points.cols, out.row(i));
  return out;
}

}  // namespace unfurl::detail
