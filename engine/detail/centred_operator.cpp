#include "engine/detail/centred_operator.hpp"

#include <algorithm>
#include <atomic>
#include <cmath>

#include "engine/detail/upper_tiles.hpp"
#include "engine/parallel.hpp"

namespace unfurl::detail {

namespace {
// One row's share of S x: its dot product with x, and its entries times x_i added to the
// column sums. Separate pointers the compiler may assume distinct. The dot product runs in
// kSumWidth partial sums (entry j feeds sum j mod kSumWidth), added in index order at the end:
// independent sums vectorise (one running sum is a chain of dependent additions, and exact
// mode's operator ran 3x slower), and the order is the same for every vector width. So the
// AVX-512 and AVX2 clones, which the baseline x86-64 build would otherwise never use (the
// single-vector pass was bound by SSE2 arithmetic, not memory), give the baseline's bits: no
// fused multiply-adds (none of the clones' targets enables FMA, and contraction is off).
constexpr std::size_t kSumWidth = 16;

__attribute__((target_clones("avx512f", "avx2", "default"), optimize("fp-contract=off"))) void
sum_row(const float* __restrict row, const double* __restrict x, double xi,
        double* __restrict column, std::size_t n, double& dot) {
  double partial[kSumWidth] = {};
  std::size_t j = 0;
  for (; j + kSumWidth <= n; j += kSumWidth) {
#pragma omp simd
    for (std::size_t l = 0; l < kSumWidth; ++l) {
      const double v = row[j + l];
      const double q = v * v;
      partial[l] += q * x[j + l];
      column[j + l] += q * xi;
    }
  }
  for (std::size_t l = 0; j < n; ++j, ++l) {  // the tail: entry j still feeds sum j mod width
    const double v = row[j];
    const double q = v * v;
    partial[l] += q * x[j];
    column[j] += q * xi;
  }
  double sum = 0.0;
  for (std::size_t l = 0; l < kSumWidth; ++l) sum += partial[l];
  dot = sum;
}

// True when D is square, exactly symmetric and zero on the diagonal (all_geodesic_rows gives
// such rows). One tiled pass, about the cost of one operator product; it lets every later
// product read only the upper triangle.
bool exactly_symmetric(const DistanceRows& d) {
  if (d.rows != d.cols) return false;
  for (std::size_t i = 0; i < d.cols; ++i)
    if (d.row(i)[i] != 0.0f) return false;
  std::atomic<bool> symmetric{true};
  for_upper_pairs_tiled(d.cols, [&](std::size_t i, std::size_t j) {
    if (d.row(i)[j] != d.row(j)[i]) symmetric.store(false, std::memory_order_relaxed);
  });
  return symmetric.load();
}

// Blocks of rows for a product of k vectors: fewer as k grows, so the k column-sum buffers of
// every block stay about the size of one vector's 64 (fixed by N and k: no thread-count
// dependence).
std::size_t blocks_for(std::size_t blocks, std::size_t k) {
  return std::min(blocks, std::max<std::size_t>(8, CentredSquaredOperator::kMaxBlocks / k));
}

// The several-vector product works on lanes: the k vectors stored row-major and padded to a
// multiple of kLanes, so entry j of every vector is contiguous and each q = D_ij^2 feeds
// kLanes-wide multiply-adds, the dot products held in registers. Columns are taken in tiles
// of kTile so the tile's slices of X and of the column sums stay in cache while every row of
// a block passes over them (X and the sums are 2 n k doubles, beyond cache for k = 16).
constexpr std::size_t kLanes = 8;
constexpr std::size_t kTile = 128;

std::size_t padded(std::size_t k) {
  return (k + kLanes - 1) / kLanes * kLanes;
}

// Rows i .. i + R - 1 (R = 1 to kRows) over the entries j in [from, to) for all lanes: per
// row dot[l] += q_j x[j][l], and column[j][l] += q_j x[i][l] row after row. Several rows at a
// time share each load and store of the column sums and of x[j]; every sum still takes its
// terms in the same order (j order for a dot product, row order for a column sum), whatever
// the tiling, the grouping or the thread count. Vector instructions run lane by lane without
// fused multiply-adds (none of the clones' targets enables FMA), so every clone gives the
// same bits as the baseline one; the AVX-512 clone holds four rows' sums in registers.
constexpr std::size_t kRows = 4;

template <std::size_t R>
__attribute__((target_clones("avx512f", "avx2", "default"), optimize("fp-contract=off"))) void
sum_rows_lanes(const float* const* rows, const double* __restrict x, const double* __restrict xi,
               double* __restrict column, double* __restrict dot, double* __restrict q,
               std::size_t from, std::size_t to, std::size_t lanes) {
  const std::size_t span = to - from;
  for (std::size_t r = 0; r < R; ++r)
    for (std::size_t j = 0; j < span; ++j) {
      const double v = rows[r][from + j];
      q[r * span + j] = v * v;
    }
  for (std::size_t g = 0; g < lanes; g += kLanes) {
    double acc[R][kLanes], own[R][kLanes];
    for (std::size_t r = 0; r < R; ++r)
      for (std::size_t l = 0; l < kLanes; ++l) {
        acc[r][l] = dot[r * lanes + g + l];
        own[r][l] = xi[r * lanes + g + l];
      }
    for (std::size_t j = 0; j < span; ++j) {
      const double* xj = x + (from + j) * lanes + g;
      double* cj = column + (from + j) * lanes + g;
      for (std::size_t r = 0; r < R; ++r) {
        const double qj = q[r * span + j];
#pragma omp simd
        for (std::size_t l = 0; l < kLanes; ++l) {
          acc[r][l] += qj * xj[l];
          cj[l] += qj * own[r][l];
        }
      }
    }
    for (std::size_t r = 0; r < R; ++r)
      for (std::size_t l = 0; l < kLanes; ++l) dot[r * lanes + g + l] = acc[r][l];
  }
}

// The first `active` rows of a group (consecutive rows, their x and dot rows `lanes` apart).
void sum_active_rows(std::size_t active, const float* const* rows, const double* x,
                     const double* xi, double* column, double* dot, double* q, std::size_t from,
                     std::size_t to, std::size_t lanes) {
  switch (active) {
    case 1:
      return sum_rows_lanes<1>(rows, x, xi, column, dot, q, from, to, lanes);
    case 2:
      return sum_rows_lanes<2>(rows, x, xi, column, dot, q, from, to, lanes);
    case 3:
      return sum_rows_lanes<3>(rows, x, xi, column, dot, q, from, to, lanes);
    default:
      return sum_rows_lanes<kRows>(rows, x, xi, column, dot, q, from, to, lanes);
  }
}

// First row of block b of `blocks`: equal shares of the rows, or of the upper triangle's
// entries when only the triangle is read (row i holds n - 1 - i of them).
std::size_t block_start(std::size_t b, std::size_t blocks, std::size_t n, bool triangle) {
  if (b >= blocks) return n;
  if (!triangle) return b * n / blocks;
  const double left = 1.0 - static_cast<double>(b) / static_cast<double>(blocks);
  return std::min(n, static_cast<std::size_t>(static_cast<double>(n) * (1.0 - std::sqrt(left))));
}
}  // namespace

CentredSquaredOperator::CentredSquaredOperator(const DistanceRows& rows, StopToken stop)
    : d_(rows),
      n_(rows.cols),
      blocks_(std::min(kMaxBlocks, std::max<std::size_t>(rows.cols, 1))),
      triangle_(exactly_symmetric(rows)),
      stop_(stop),
      row_means_(rows.cols),
      partial_(blocks_ * rows.cols),
      own_(rows.cols) {
  const std::vector<double> ones(n_, 1.0);
  squared_product(ones.data(), row_means_.data(), 1);
  double total = 0.0;
  for (std::size_t i = 0; i < n_; ++i) {
    row_means_[i] /= static_cast<double>(n_);
    total += row_means_[i];
  }
  grand_mean_ = total / static_cast<double>(n_);
}

std::size_t CentredSquaredOperator::work_bytes(std::size_t n, std::size_t vectors) {
  const std::size_t one = std::min(kMaxBlocks, std::max<std::size_t>(n, 1));
  if (vectors <= 1) return (one + 2) * n * sizeof(double);
  // Per block the padded column sums; besides them the row sums, the padded copy of X and the
  // row means (at N = 10,000 and 16 vectors: 12.9 MB).
  const std::size_t width = padded(vectors);
  const std::size_t most = std::max(one, blocks_for(one, vectors) * width);
  return (most + 2 * width + 1) * n * sizeof(double);  // + 1: the row means
}

// The full pass (D not exactly symmetric) counts each pair twice, hence the 1/2 in add_blocks.
void CentredSquaredOperator::squared_product(const double* x, double* y, std::size_t k) const {
  if (k <= 1) {
    squared_product_one(x, y);
  } else {
    squared_product_lanes(x, y, k);
  }
}

void CentredSquaredOperator::squared_product_one(const double* x, double* y) const {
  const std::size_t n = n_;
  over_blocks(blocks_, n, [&](std::size_t first, std::size_t last, double* column) {
    for (std::size_t i = first; i < last; ++i) {
      // The triangle: entries j > i, which feed (S x)_i and, through the column sums, (S x)_j.
      const std::size_t from = triangle_ ? i + 1 : 0;
      sum_row(d_.row(i) + from, x + from, x[i], column + from, n - from, own_[i]);
    }
  });
  add_blocks(blocks_, 1, 1, y);
}

void CentredSquaredOperator::squared_product_lanes(const double* x, double* y,
                                                   std::size_t k) const {
  const std::size_t count_blocks = blocks_for(blocks_, k);
  const std::size_t n = n_;
  const std::size_t lanes = padded(k);
  const std::size_t width = n * lanes;  // one block's column sums for all lanes
  if (partial_.size() < count_blocks * width) partial_.resize(count_blocks * width);
  if (own_.size() < width) own_.resize(width);
  if (lanes_.size() < width) lanes_.resize(width);
  double* xt = lanes_.data();
  for (std::size_t j = 0; j < n; ++j)
    for (std::size_t l = 0; l < lanes; ++l) xt[j * lanes + l] = l < k ? x[l * n + j] : 0.0;
  std::fill(own_.begin(), own_.begin() + static_cast<std::ptrdiff_t>(width), 0.0);
  over_blocks(count_blocks, width, [&](std::size_t first, std::size_t last, double* column) {
    double q[kRows * kTile];
    // Tiles of columns outside, the block's rows inside: a row's dot products still take
    // their terms in column order, and a column sum its terms in row order.
    for (std::size_t tile = triangle_ ? first + 1 : 0; tile < n; tile += kTile) {
      const std::size_t end = std::min(n, tile + kTile);
      // The triangle: entries j > i, which feed (S x)_i and, through the column sums, (S x)_j.
      auto start = [&](std::size_t i) { return triangle_ ? std::max(tile, i + 1) : tile; };
      for (std::size_t i = first; i < last && start(i) < end; i += kRows) {
        const float* rows[kRows];
        std::size_t group = 0;  // rows of the group that have entries in this tile
        while (group < kRows && i + group < last && start(i + group) < end) {
          rows[group] = d_.row(i + group);
          ++group;
        }
        // Row i alone up to row i + 1's first entry, rows i and i + 1 up to row i + 2's, ...
        // (in the triangle row i + r starts one entry after row i + r - 1).
        std::size_t from = start(i);
        for (std::size_t active = 1; active <= group; ++active) {
          const std::size_t to = active < group ? start(i + active) : end;
          if (from < to)
            sum_active_rows(active, rows, xt, xt + i * lanes, column, own_.data() + i * lanes, q,
                            from, to, lanes);
          from = std::max(from, to);
        }
      }
    }
  });
  add_blocks(count_blocks, lanes, k, y);
}

template <class Fill>
void CentredSquaredOperator::over_blocks(std::size_t blocks, std::size_t width,
                                         const Fill& fill) const {
  ExceptionCollector errors;
#pragma omp parallel for schedule(dynamic, 1)
  for (std::ptrdiff_t b = 0; b < static_cast<std::ptrdiff_t>(blocks); ++b) {
    errors.run([&] {
      stop_.check("spectral");
      double* column = partial_.data() + static_cast<std::size_t>(b) * width;
      std::fill(column, column + width, 0.0);
      const auto block = static_cast<std::size_t>(b);
      fill(block_start(block, blocks, n_, triangle_), block_start(block + 1, blocks, n_, triangle_),
           column);
    });
  }
  errors.rethrow();
}

void CentredSquaredOperator::add_blocks(std::size_t blocks, std::size_t lanes, std::size_t k,
                                        double* y) const {
  const std::size_t n = n_, width = n * lanes;
#pragma omp parallel for schedule(static)
  for (std::ptrdiff_t j = 0; j < static_cast<std::ptrdiff_t>(n); ++j) {
    const auto at = static_cast<std::size_t>(j) * lanes;
    for (std::size_t v = 0; v < k; ++v) {
      double sum = own_[at + v];
      for (std::size_t b = 0; b < blocks; ++b) sum += partial_[b * width + at + v];
      y[v * n + static_cast<std::size_t>(j)] = triangle_ ? sum : 0.5 * sum;  // see squared_product
    }
  }
}

void CentredSquaredOperator::perform_op(const double* x, double* y) const {
  perform_block(x, y, 1);
}

void CentredSquaredOperator::perform_block(const double* x, double* y, std::size_t k) const {
  squared_product(x, y, k);
  for (std::size_t v = 0; v < k; ++v) {
    const double* xv = x + v * n_;
    double* yv = y + v * n_;
    double sum_x = 0.0, r_x = 0.0;
    for (std::size_t i = 0; i < n_; ++i) {
      sum_x += xv[i];
      r_x += row_means_[i] * xv[i];
    }
    for (std::size_t i = 0; i < n_; ++i)
      yv[i] = -0.5 * (yv[i] - row_means_[i] * sum_x - r_x + grand_mean_ * sum_x);
  }
}

}  // namespace unfurl::detail
