#include "engine/detail/neighbour_scan.hpp"

#include <algorithm>

namespace unfurl::detail {

namespace {

// out[l] = sum over c of (x_c[l] - q[c])^2, taking the columns in order: each point's sum is
// one chain in one lane, so the AVX-512 and AVX2 clones (picked at run time) give the
// baseline's bits; none of their targets lets GCC fuse a multiply-add (fp-contract off).
// Scoring Fashion-MNIST (784 columns) spends most of its time here.
__attribute__((target_clones("avx512f", "avx2", "default"), optimize("fp-contract=off"))) void
squared_distances(const float* base, std::size_t column_step, std::size_t d, const double* q,
                  std::size_t len, double* __restrict out) {
  {
    const float* x = base;
    const double q0 = q[0];
    for (std::size_t l = 0; l < len; ++l) {
      const double t = static_cast<double>(x[l]) - q0;
      out[l] = t * t;
    }
  }
  for (std::size_t c = 1; c < d; ++c) {
    const float* x = base + c * column_step;
    const double qc = q[c];
    for (std::size_t l = 0; l < len; ++l) {
      const double t = static_cast<double>(x[l]) - qc;
      out[l] += t * t;
    }
  }
}

}  // namespace

__attribute__((optimize("fp-contract=off"))) double exact_squared_to(const double* q,
                                                                     const float* x,
                                                                     std::size_t d) {
  if (d == 0) return 0;
  double t = static_cast<double>(x[0]) - q[0];
  double sum = t * t;
  for (std::size_t c = 1; c < d; ++c) {
    t = static_cast<double>(x[c]) - q[c];
    sum += t * t;
  }
  return sum;
}

DistanceScanner::DistanceScanner(const PointSet& points)
    : points_(points),
      // About 64 KiB of transposed coordinates per chunk: small enough to stay in L2 while a
      // block of queries reuses it, large enough to amortise the loop overhead.
      chunk_(std::clamp<std::size_t>(16384 / std::max<std::size_t>(points.cols, 1), 64, 4096)) {
  const std::size_t n = points.rows, d = points.cols;
  if (n * d <= (std::size_t{1} << 28)) {
    columns_.resize(n * d);
    for (std::size_t i = 0; i < n; ++i)
      for (std::size_t c = 0; c < d; ++c) columns_[c * n + i] = points.values[i * d + c];
  }
}

void DistanceScanner::load_query(std::size_t i, double* q) const {
  const float* p = points_.row(i);
  for (std::size_t c = 0; c < points_.cols; ++c) q[c] = p[c];
}

void DistanceScanner::distances(const double* queries, std::size_t count, std::size_t begin,
                                std::size_t end, std::vector<float>& columns, double* dist2) const {
  const std::size_t d = points_.cols;
  const std::size_t len = end - begin;
  const std::size_t stride = chunk_;
  // Column c of the chunk starts at base + c * column_step.
  const float* base;
  std::size_t column_step;
  if (!columns_.empty()) {
    base = columns_.data() + begin;
    column_step = points_.rows;
  } else {
    // Transposed, so the innermost loop runs over points with unit stride and vectorises.
    columns.resize(d * stride);
    for (std::size_t l = 0; l < len; ++l) {
      const float* p = points_.row(begin + l);
      for (std::size_t c = 0; c < d; ++c) columns[c * stride + l] = p[c];
    }
    base = columns.data();
    column_step = stride;
  }
  for (std::size_t b = 0; b < count; ++b)
    squared_distances(base, column_step, d, queries + b * d, len, dist2 + b * stride);
}

void NearestList::reset(std::size_t size) {
  size_ = size;
  worst_ = kInf;
  buffer_.clear();
  buffer_.reserve(2 * size);
}

void NearestList::cut() {
  const auto last = buffer_.begin() + static_cast<std::ptrdiff_t>(size_) - 1;
  std::nth_element(buffer_.begin(), last, buffer_.end(), Before{});
  buffer_.resize(size_);
  worst_ = buffer_.back().dist2;  // the size_-th best: every kept point comes before it
}

void NearestList::take_sorted(std::vector<Ranked>& out) {
  if (buffer_.size() > size_) cut();
  std::sort(buffer_.begin(), buffer_.end(), Before{});
  out.swap(buffer_);
  buffer_.clear();
}

void ranks_of(const DistanceScanner& scanner, const double* queries, std::size_t count,
              std::span<const NodeId> selves, std::span<const std::vector<Ranked>> thresholds,
              std::vector<float>& columns, std::vector<double>& dist2,
              std::vector<std::vector<std::size_t>>& ranks) {
  // below[b][a]: points that come before thresholds[b][a] but not before thresholds[b][a-1];
  // the prefix sums are the ranks. Most points fail the first comparison.
  ranks.resize(count);
  for (std::size_t b = 0; b < count; ++b) ranks[b].assign(thresholds[b].size(), 0);
  const std::size_t n = scanner.rows();
  const std::size_t chunk = scanner.chunk();
  dist2.resize(count * chunk);
  for (std::size_t begin = 0; begin < n && count > 0; begin += chunk) {
    const std::size_t end = std::min(n, begin + chunk);
    scanner.distances(queries, count, begin, end, columns, dist2.data());
    for (std::size_t b = 0; b < count; ++b) {
      const std::vector<Ranked>& t = thresholds[b];
      if (t.empty()) continue;
      const Ranked last = t.back();
      std::vector<std::size_t>& below = ranks[b];
      const double* row = dist2.data() + b * chunk;
      for (std::size_t l = begin; l < end; ++l) {
        if (row[l - begin] > last.dist2) continue;  // the common case, one compare
        const Ranked r{row[l - begin], static_cast<NodeId>(l)};
        if (!before(r, last) || l == selves[b]) continue;
        const auto it = std::upper_bound(t.begin(), t.end(), r, Before{});
        ++below[static_cast<std::size_t>(it - t.begin())];
      }
    }
  }
  for (std::size_t b = 0; b < count; ++b) {
    std::size_t sum = 0;
    for (std::size_t& v : ranks[b]) {
      sum += v;
      v = sum + 1;
    }
  }
}

}  // namespace unfurl::detail
