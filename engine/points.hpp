// Data conventions for the whole engine:
// - A point set is N rows (points) by d columns (coordinates), row-major, float32, one
//   contiguous buffer: row i is values[i*d .. i*d + d).
// - Point and node ids are 32-bit (uint32_t) while N < 2^31; counts and offsets are 64-bit.
// - Distances are Euclidean (not squared) unless a name says "squared".
#pragma once

#include <cstddef>
#include <cstdint>
#include <span>
#include <vector>

namespace unfurl {

using NodeId = std::uint32_t;

struct PointSet {
  std::size_t rows = 0;
  std::size_t cols = 0;
  std::vector<float> values;  // rows * cols, row-major
  // Empty, or one key per row of the row's values before narrowing to float32 (readers set
  // it): rows whose keys differ are distinct data even when their float32 values are equal.
  std::vector<std::uint64_t> row_keys;

  PointSet() = default;
  PointSet(std::size_t n, std::size_t d) : rows(n), cols(d), values(n * d, 0.0f) {}

  float* row(std::size_t i) { return values.data() + i * cols; }
  const float* row(std::size_t i) const { return values.data() + i * cols; }
  std::span<const float> row_span(std::size_t i) const { return {row(i), cols}; }
  bool empty() const { return rows == 0 || cols == 0; }
};

}  // namespace unfurl
