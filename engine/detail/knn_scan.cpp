// Blocked brute-force back end for high dimension. Squared distances come from float32
// matrix products, |x|^2 - 2 x.y + |y|^2, on data centred at the column means (which shrinks
// the norms and so the cancellation). Those approximations only choose candidates; every
// kept distance is recomputed exactly (exact_squared), and a row is certified by the error
// bound of a float dot product, |fl(x.y) - x.y| <= gamma_d |x| |y| with gamma_d ~ d u
// (Higham, "Accuracy and Stability of Numerical Algorithms", 2nd ed., section 3.1). A row
// that cannot be certified is rescanned with a threshold, so the result is exact.
#include <algorithm>
#include <cmath>
#include <mutex>

#include "engine/detail/float_scan.hpp"
#include "engine/detail/neighbour_search.hpp"
#include "engine/error.hpp"

namespace unfurl::detail {
namespace {

// Rows whose neighbours are every data row with approximate squared distance <= limit[r]
// (exactly filtered by keep(r, neighbour)), for the listed query rows.
template <class Keep>
std::vector<std::vector<Neighbour>> threshold_scan(const ScanData& s, const PointSet& data,
                                                   const PointSet& queries,
                                                   std::span<const std::size_t> rows,
                                                   std::span<const double> limit, bool exclude_self,
                                                   std::size_t block_rows, StopToken stop,
                                                   Keep&& keep) {
  std::vector<std::vector<Neighbour>> lists(rows.size());
  parallel_chunks(rows.size(), block_rows, stop, "graph", [&](std::size_t b, std::size_t e) {
    const auto block_list = rows.subspan(b, e - b);
    const QueryBlock qb = gather_queries(s, queries, block_list);
    for_each_column_block(
        s, qb, [&](std::size_t r, std::size_t c0, const float* a, std::size_t cn) {
          const std::size_t q = block_list[r];
          for (std::size_t j = 0; j < cn; ++j) {
            const std::size_t t = c0 + j;
            if (a[j] > limit[b + r] || (exclude_self && t == q)) continue;
            const Neighbour nb{static_cast<NodeId>(t),
                               exact_squared(queries.row(q), data.row(t), data.cols)};
            if (keep(b + r, nb)) lists[b + r].push_back(nb);
          }
        });
    stop.advance(e - b);
  });
  return lists;
}

std::vector<std::size_t> all_rows(std::size_t n) {
  std::vector<std::size_t> rows(n);
  for (std::size_t i = 0; i < n; ++i) rows[i] = i;
  return rows;
}

// The `keep` best candidates of every query row by (approximation, index), as one max-heap
// per row. The final set does not depend on the order of offers (a strict total order), so
// threads may offer in any order; each block of rows has a lock.
using Entry = std::pair<float, NodeId>;
class CandidateHeaps {
 public:
  CandidateHeaps(std::size_t rows, std::size_t keep, std::size_t block_rows)
      : keep_(keep),
        block_(block_rows),
        entries_(rows * keep),
        count_(rows, 0),
        locks_((rows + block_rows - 1) / block_rows) {}
  std::span<const Entry> row(std::size_t r) const { return {&entries_[r * keep_], count_[r]}; }
  std::mutex& lock_of(std::size_t r) { return locks_[r / block_]; }
  // Entries not below this never enter row r (caller holds the row's lock).
  Entry bound(std::size_t r) const {
    return count_[r] == keep_ ? entries_[r * keep_] : Entry{INFINITY, UINT32_MAX};
  }
  void offer(std::size_t r, Entry e) {  // caller holds the row's lock
    Entry* heap = &entries_[r * keep_];
    std::size_t& n = count_[r];
    if (n == keep_) {
      if (!(e < heap[0])) return;
      std::pop_heap(heap, heap + n);
      heap[n - 1] = e;
    } else {
      heap[n++] = e;
    }
    std::push_heap(heap, heap + n);
  }

 private:
  std::size_t keep_, block_;
  std::vector<Entry> entries_;
  std::vector<std::size_t> count_;
  std::vector<std::mutex> locks_;
};

// Queries other than the data: each block of query rows against all data rows.
void query_candidates(const ScanData& s, const PointSet& queries, std::size_t block_rows,
                      CandidateHeaps& heaps, StopToken stop) {
  const auto rows = all_rows(queries.rows);
  parallel_chunks(queries.rows, block_rows, stop, "graph", [&](std::size_t b, std::size_t e) {
    const QueryBlock qb = gather_queries(s, queries, std::span(rows).subspan(b, e - b));
    std::lock_guard<std::mutex> hold(heaps.lock_of(b));  // blocks are this task's own
    for_each_column_block(s, qb,
                          [&](std::size_t r, std::size_t c0, const float* a, std::size_t cn) {
                            for (std::size_t j = 0; j < cn; ++j)
                              heaps.offer(b + r, {a[j], static_cast<NodeId>(c0 + j)});
                          });
    stop.advance(e - b);
  });
}

// The data against themselves: the distance matrix is symmetric, so each pair of row
// blocks (I <= J) is multiplied once and offered to the rows of both blocks. Self pairs
// are skipped by index.
void symmetric_candidates(const ScanData& s, std::size_t block_rows, CandidateHeaps& heaps,
                          StopToken stop) {
  const std::size_t n = s.rows, d = s.cols;
  const std::size_t blocks = (n + block_rows - 1) / block_rows;
  parallel_chunks(blocks, 1, stop, "graph", [&](std::size_t block, std::size_t) {
    const std::size_t b0 = block * block_rows, bn = std::min(block_rows, n - b0);
    std::vector<float> product(bn * block_rows);
    std::vector<Entry> row_bound(bn), col_bound(block_rows);
    std::vector<float> col_limit(block_rows);
    std::vector<std::pair<std::size_t, Entry>> to_rows, to_cols;
    for (std::size_t other = block; other < blocks; ++other) {
      stop.check("graph");
      const std::size_t c0 = other * block_rows, cn = std::min(block_rows, n - c0);
      product_transposed(s.y.data() + b0 * d, bn, s.y.data() + c0 * d, cn, d, product.data());
      {
        std::lock_guard<std::mutex> hold(heaps.lock_of(b0));
        for (std::size_t r = 0; r < bn; ++r) row_bound[r] = heaps.bound(b0 + r);
      }
      const bool mirrored = other != block;
      if (mirrored) {
        std::lock_guard<std::mutex> hold(heaps.lock_of(c0));
        for (std::size_t c = 0; c < cn; ++c) col_bound[c] = heaps.bound(c0 + c);
      }
      to_rows.clear();
      to_cols.clear();
      // Most pairs fail both bounds on the float alone; the (value, index) order decides
      // only the rest.
      if (mirrored)
        for (std::size_t c = 0; c < cn; ++c) col_limit[c] = col_bound[c].first;
      for (std::size_t r = 0; r < bn; ++r) {
        const float* p = product.data() + r * cn;
        const float nr = s.norm2[b0 + r];
        const Entry bound_r = row_bound[r];
        for (std::size_t c = 0; c < cn; ++c) {
          const float a = nr + s.norm2[c0 + c] - 2.0f * p[c];
          if (a <= bound_r.first) {
            const Entry to_r{a, static_cast<NodeId>(c0 + c)};
            if (to_r < bound_r && c0 + c != b0 + r) to_rows.push_back({r, to_r});
          }
          if (mirrored && a <= col_limit[c]) {
            const Entry to_c{a, static_cast<NodeId>(b0 + r)};
            if (to_c < col_bound[c]) to_cols.push_back({c, to_c});
          }
        }
      }
      {
        std::lock_guard<std::mutex> hold(heaps.lock_of(b0));
        for (const auto& [r, e] : to_rows) heaps.offer(b0 + r, e);
      }
      if (mirrored) {
        std::lock_guard<std::mutex> hold(heaps.lock_of(c0));
        for (const auto& [c, e] : to_cols) heaps.offer(c0 + c, e);
      }
    }
    stop.advance(bn);  // the block's rows have met every row
  });
}

}  // namespace

void knn_scan(const PointSet& data, const PointSet& queries, std::size_t k, bool exclude_self,
              std::size_t block_rows, std::span<Neighbour> out, StopToken stop) {
  if (k == 0 || queries.rows == 0) return;
  const std::size_t available = data.rows - (exclude_self ? 1 : 0);
  if (k > available) throw InternalError("knn_scan: k exceeds the rows available");
  const ScanData s = prepare_scan(data);
  // Candidates beyond k absorb the approximation error; common practice, no source.
  const std::size_t keep = std::min(available, k + std::max<std::size_t>(16, k));
  CandidateHeaps heaps(queries.rows, keep, block_rows);
  if (exclude_self)
    symmetric_candidates(s, block_rows, heaps, stop);
  else
    query_candidates(s, queries, block_rows, heaps, stop);

  // Exact distances of the candidates; a row is certified when every row left out has an
  // approximation >= the heap top, hence an exact distance >= top - slack > the k-th kept.
  std::vector<char> certain(queries.rows, 1);
  std::vector<double> limit(queries.rows, 0.0);
  parallel_chunks(queries.rows, 1024, stop, "graph", [&](std::size_t b, std::size_t e) {
    std::vector<Neighbour> list;
    std::vector<const float*> rows;
    std::vector<double> exact;
    for (std::size_t q = b; q < e; ++q) {
      const auto heap = heaps.row(q);
      rows.clear();
      for (const auto& [approx, t] : heap) rows.push_back(data.row(t));
      exact.resize(rows.size());
      exact_squared_batch(queries.row(q), rows.data(), rows.size(), data.cols, exact.data());
      list.clear();
      for (std::size_t c = 0; c < heap.size(); ++c) list.push_back({heap[c].second, exact[c]});
      std::sort(list.begin(), list.end(), closer);
      std::copy_n(list.begin(), k, out.begin() + static_cast<std::ptrdiff_t>(q * k));
      if (heap.size() == available) continue;  // every row was a candidate
      const double kth = list[k - 1].squared;
      const double margin = scan_slack(s, centred_norm2(s, queries.row(q)));
      if (static_cast<double>(heap.front().first) - margin > kth) continue;
      certain[q] = 0;
      limit[q] = kth + margin;
    }
  });
  std::vector<std::size_t> uncertain;
  std::vector<double> uncertain_limit;
  for (std::size_t q = 0; q < queries.rows; ++q)
    if (!certain[q]) uncertain.push_back(q), uncertain_limit.push_back(limit[q]);
  if (uncertain.empty()) return;
  auto lists =
      threshold_scan(s, data, queries, uncertain, uncertain_limit, exclude_self, block_rows,
                     stop.silent(), [](std::size_t, const Neighbour&) { return true; });
  for (std::size_t u = 0; u < uncertain.size(); ++u) {
    auto& list = lists[u];
    if (list.size() < k) throw InternalError("knn_scan: threshold rescan lost neighbours");
    std::partial_sort(list.begin(), list.begin() + static_cast<std::ptrdiff_t>(k), list.end(),
                      closer);
    std::copy_n(list.begin(), k, out.begin() + static_cast<std::ptrdiff_t>(uncertain[u] * k));
  }
}

RadiusLists radius_scan(const PointSet& data, const PointSet& queries, double radius,
                        bool exclude_self, std::size_t block_rows, StopToken stop) {
  if (data.rows == 0) return RadiusLists(queries.rows);
  const ScanData s = prepare_scan(data);
  const auto rows = all_rows(queries.rows);
  const double r2 = radius * radius;
  std::vector<double> limit(queries.rows);
  for (std::size_t q = 0; q < queries.rows; ++q) {
    limit[q] = r2 + scan_slack(s, centred_norm2(s, queries.row(q)));
  }
  auto lists = threshold_scan(s, data, queries, rows, limit, exclude_self, block_rows, stop,
                              [r2](std::size_t, const Neighbour& n) { return n.squared <= r2; });
  return lists;  // column blocks run in index order, so each list is sorted by index
}

}  // namespace unfurl::detail
