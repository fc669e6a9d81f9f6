// Sorting the graph stages' long key arrays (10 million entries and more) on every thread.
#pragma once

#include <algorithm>
#include <cstddef>
#include <functional>
#include <vector>

#include "engine/detail/parallel_chunks.hpp"
#include "engine/parallel.hpp"

namespace unfurl::detail {

// Sorts `values` by `less`, which must be a strict total order on them (keys carrying a
// unique index, say): the sorted sequence is then the only one, so the result does not
// depend on the thread count. Equal pieces are sorted in parallel and merged pairwise (each
// round's merges in parallel), with one buffer as large as `values`.
template <class T, class Less = std::less<>>
void parallel_sort(std::vector<T>& values, Less less = {}) {
  // Below this a single std::sort costs less than the threads and the buffer.
  constexpr std::size_t kSerialBelow = 1 << 16;
  constexpr std::size_t kMaxPieces = 16;
  const std::size_t n = values.size();
  const auto threads = static_cast<std::size_t>(std::max(1, resolve_threads(0)));
  if (threads < 2 || n < kSerialBelow) {
    std::sort(values.begin(), values.end(), less);
    return;
  }
  std::size_t pieces = 2;
  while (pieces < threads && pieces < kMaxPieces) pieces *= 2;
  std::vector<std::size_t> bound(pieces + 1);
  for (std::size_t p = 0; p <= pieces; ++p) bound[p] = n * p / pieces;
  parallel_chunks(pieces, 1, {}, "sort", [&](std::size_t p, std::size_t) {
    std::sort(values.begin() + static_cast<std::ptrdiff_t>(bound[p]),
              values.begin() + static_cast<std::ptrdiff_t>(bound[p + 1]), less);
  });
  std::vector<T> buffer(n);
  std::vector<T>* from = &values;
  std::vector<T>* to = &buffer;
  for (std::size_t width = 1; width < pieces; width *= 2) {
    parallel_chunks(pieces / (2 * width), 1, {}, "sort", [&](std::size_t pair, std::size_t) {
      const std::size_t lo = bound[2 * width * pair], mid = bound[2 * width * pair + width],
                        hi = bound[2 * width * (pair + 1)];
      const auto at = [](std::vector<T>& v, std::size_t i) {
        return v.begin() + static_cast<std::ptrdiff_t>(i);
      };
      std::merge(at(*from, lo), at(*from, mid), at(*from, mid), at(*from, hi), at(*to, lo), less);
    });
    std::swap(from, to);
  }
  if (from != &values) values.swap(buffer);
}

}  // namespace unfurl::detail
