// Blocked brute-force back end for high dimension. Squared distances come from float32
// matrix products, |x|^2 - 2 x.y + |y|^2, on data centred at the column means (which shrinks
// the norms and so the cancellation). Those approximations only choose candidates; every
// kept distance is recomputed exactly (exact_squared), and a row is certified by the error
// bound of a float dot product, |fl(x.y) - x.y| <= gamma_d |x| |y| with gamma_d ~ d u
// (Higham, "Accuracy and Stability of Numerical Algorithms", 2nd ed., section 3.1). A row
// that cannot be certified is rescanned with a threshold, so the result is exact.
#include <Eigen/Dense>
#include <algorithm>
#include <cmath>

#include "engine/detail/neighbour_search.hpp"
#include "engine/error.hpp"

namespace unfurl::detail {
namespace {

using RowMatrix = Eigen::Matrix<float, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>;
constexpr std::size_t kColumnBlock = 2048;  // columns per product: B x 2048 floats per thread
constexpr double kUnitRoundoff = 0x1p-24;   // float32 unit roundoff

struct ScanData {
  std::vector<double> mean;
  RowMatrix y;               // centred data rows
  std::vector<float> norm2;  // |y|^2 per row
  double max_norm = 0.0;
};

ScanData prepare(const PointSet& data) {
  ScanData s;
  const std::size_t n = data.rows, d = data.cols;
  s.mean.assign(d, 0.0);
  for (std::size_t i = 0; i < n; ++i)
    for (std::size_t j = 0; j < d; ++j) s.mean[j] += data.row(i)[j];
  for (double& m : s.mean) m /= static_cast<double>(n);
  s.y.resize(static_cast<Eigen::Index>(n), static_cast<Eigen::Index>(d));
  s.norm2.resize(n);
  for (std::size_t i = 0; i < n; ++i) {
    double sum = 0.0;
    for (std::size_t j = 0; j < d; ++j) {
      const float v = static_cast<float>(data.row(i)[j] - s.mean[j]);
      s.y(static_cast<Eigen::Index>(i), static_cast<Eigen::Index>(j)) = v;
      sum += static_cast<double>(v) * v;
    }
    s.norm2[i] = static_cast<float>(sum);
    s.max_norm = std::max(s.max_norm, std::sqrt(sum));
  }
  return s;
}

// Bound on |approximate - exact| squared distance for a centred query of squared norm
// `norm2`: gamma_{d+4} (|x| + max |y|)^2, doubled for safety.
double slack(const ScanData& s, std::size_t d, double norm2) {
  const double gamma = 2.0 * static_cast<double>(d + 4) * kUnitRoundoff;
  const double reach = std::sqrt(norm2) + s.max_norm;
  return gamma * reach * reach;
}

struct QueryBlock {
  RowMatrix x;
  std::vector<float> norm2;
  std::vector<double> slack;  // bound on |approximate - exact| squared distance, per row
};

QueryBlock gather(const ScanData& s, const PointSet& queries, std::span<const std::size_t> rows) {
  QueryBlock b;
  const std::size_t d = queries.cols;
  b.x.resize(static_cast<Eigen::Index>(rows.size()), static_cast<Eigen::Index>(d));
  b.norm2.resize(rows.size());
  b.slack.resize(rows.size());
  for (std::size_t r = 0; r < rows.size(); ++r) {
    double sum = 0.0;
    for (std::size_t j = 0; j < d; ++j) {
      const float v = static_cast<float>(queries.row(rows[r])[j] - s.mean[j]);
      b.x(static_cast<Eigen::Index>(r), static_cast<Eigen::Index>(j)) = v;
      sum += static_cast<double>(v) * v;
    }
    b.norm2[r] = static_cast<float>(sum);
    b.slack[r] = slack(s, d, sum);
  }
  return b;
}

// Visits the approximate squared distances of the block's rows to every data row, one
// column block at a time: visit(r, c0, row_of_approximations, count).
template <class Visit>
void for_each_column_block(const ScanData& s, const QueryBlock& b, Visit&& visit) {
  const auto n = static_cast<std::size_t>(s.y.rows());
  RowMatrix product;
  std::vector<float> approx(kColumnBlock);
  for (std::size_t c0 = 0; c0 < n; c0 += kColumnBlock) {
    const std::size_t cn = std::min(kColumnBlock, n - c0);
    product.noalias() =
        b.x *
        s.y.middleRows(static_cast<Eigen::Index>(c0), static_cast<Eigen::Index>(cn)).transpose();
    for (std::size_t r = 0; r < b.norm2.size(); ++r) {
      const float* p = product.data() + r * cn;
      for (std::size_t j = 0; j < cn; ++j) approx[j] = b.norm2[r] + s.norm2[c0 + j] - 2.0f * p[j];
      visit(r, c0, approx.data(), cn);
    }
  }
}

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
    const QueryBlock qb = gather(s, queries, block_list);
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
  });
  return lists;
}

std::vector<std::size_t> all_rows(std::size_t n) {
  std::vector<std::size_t> rows(n);
  for (std::size_t i = 0; i < n; ++i) rows[i] = i;
  return rows;
}

}  // namespace

void knn_scan(const PointSet& data, const PointSet& queries, std::size_t k, bool exclude_self,
              std::size_t block_rows, std::span<Neighbour> out, StopToken stop) {
  if (k == 0 || queries.rows == 0) return;
  const std::size_t available = data.rows - (exclude_self ? 1 : 0);
  if (k > available) throw InternalError("knn_scan: k exceeds the rows available");
  const ScanData s = prepare(data);
  // Candidates beyond k absorb the approximation error; common practice, no source.
  const std::size_t keep = std::min(available, k + std::max<std::size_t>(16, k));
  const auto rows = all_rows(queries.rows);
  std::vector<std::size_t> uncertain;
  std::vector<double> uncertain_limit;
  std::vector<std::vector<std::size_t>> uncertain_of_chunk((queries.rows + block_rows - 1) /
                                                           block_rows);
  std::vector<std::vector<double>> limit_of_chunk(uncertain_of_chunk.size());
  using Entry = std::pair<float, NodeId>;  // max-heap by (approximation, index)
  parallel_chunks(queries.rows, block_rows, stop, "graph", [&](std::size_t b, std::size_t e) {
    const QueryBlock qb = gather(s, queries, std::span(rows).subspan(b, e - b));
    std::vector<std::vector<Entry>> heaps(e - b);
    for_each_column_block(s, qb,
                          [&](std::size_t r, std::size_t c0, const float* a, std::size_t cn) {
                            auto& heap = heaps[r];
                            const std::size_t q = b + r;
                            for (std::size_t j = 0; j < cn; ++j) {
                              const Entry entry{a[j], static_cast<NodeId>(c0 + j)};
                              if (heap.size() == keep && !(entry < heap.front())) continue;
                              if (exclude_self && c0 + j == q) continue;
                              if (heap.size() == keep) {
                                std::pop_heap(heap.begin(), heap.end());
                                heap.back() = entry;
                              } else {
                                heap.push_back(entry);
                              }
                              std::push_heap(heap.begin(), heap.end());
                            }
                          });
    for (std::size_t r = 0; r < e - b; ++r) {
      const std::size_t q = b + r;
      const auto& heap = heaps[r];
      std::vector<Neighbour> list;
      list.reserve(heap.size());
      for (const auto& [approx, t] : heap)
        list.push_back({t, exact_squared(queries.row(q), data.row(t), data.cols)});
      std::sort(list.begin(), list.end(), closer);
      std::copy_n(list.begin(), k, out.begin() + static_cast<std::ptrdiff_t>(q * k));
      // Rows not kept have approximation >= heap top, so exact >= top - slack.
      const double kth = list[k - 1].squared;
      if (heap.size() == available) continue;  // every row was a candidate
      if (static_cast<double>(heap.front().first) - qb.slack[r] > kth) continue;
      uncertain_of_chunk[b / block_rows].push_back(q);
      limit_of_chunk[b / block_rows].push_back(kth + qb.slack[r]);
    }
  });
  for (std::size_t c = 0; c < uncertain_of_chunk.size(); ++c) {
    uncertain.insert(uncertain.end(), uncertain_of_chunk[c].begin(), uncertain_of_chunk[c].end());
    uncertain_limit.insert(uncertain_limit.end(), limit_of_chunk[c].begin(),
                           limit_of_chunk[c].end());
  }
  if (uncertain.empty()) return;
  auto lists = threshold_scan(s, data, queries, uncertain, uncertain_limit, exclude_self,
                              block_rows, stop, [](std::size_t, const Neighbour&) { return true; });
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
  const ScanData s = prepare(data);
  const auto rows = all_rows(queries.rows);
  const double r2 = radius * radius;
  std::vector<double> limit(queries.rows);
  for (std::size_t q = 0; q < queries.rows; ++q) {
    double sum = 0.0;
    for (std::size_t j = 0; j < queries.cols; ++j) {
      const double v = static_cast<float>(queries.row(q)[j] - s.mean[j]);
      sum += v * v;
    }
    limit[q] = r2 + slack(s, queries.cols, sum);
  }
  auto lists = threshold_scan(s, data, queries, rows, limit, exclude_self, block_rows, stop,
                              [r2](std::size_t, const Neighbour& n) { return n.squared <= r2; });
  return lists;  // column blocks run in index order, so each list is sorted by index
}

}  // namespace unfurl::detail
