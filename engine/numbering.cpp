#include "engine/numbering.hpp"

#include <algorithm>
#include <numeric>
#include <string>

#include "engine/detail/parallel_chunks.hpp"
#include "engine/error.hpp"

namespace unfurl {

Numbering::Numbering(std::vector<NodeId> to, std::size_t target_size)
    : to_(std::move(to)), target_size_(target_size) {
  if (target_size_ > absent)
    throw InternalError("Numbering: target space of " + std::to_string(target_size_) +
                        " elements exceeds 32-bit ids");
  for (std::size_t i = 0; i < to_.size(); ++i)
    if (to_[i] != absent && to_[i] >= target_size_)
      throw InternalError("Numbering: element " + std::to_string(i) + " maps to " +
                          std::to_string(to_[i]) + ", outside a space of " +
                          std::to_string(target_size_));
}

Numbering Numbering::identity(std::size_t n) {
  std::vector<NodeId> to(n);
  std::iota(to.begin(), to.end(), NodeId{0});
  return Numbering(std::move(to), n);
}

Numbering Numbering::then(const Numbering& next) const {
  if (next.size() != target_size_)
    throw InternalError("Numbering::then: a space of " + std::to_string(target_size_) +
                        " elements followed by a numbering of " + std::to_string(next.size()));
  std::vector<NodeId> to(to_.size(), absent);
  for (std::size_t i = 0; i < to_.size(); ++i)
    if (to_[i] != absent) to[i] = next.to_[to_[i]];
  return Numbering(std::move(to), next.target_size_);
}

Numbering Numbering::inverse() const {
  std::vector<NodeId> from(target_size_, absent);
  for (std::size_t i = to_.size(); i-- > 0;)  // backwards, so the smallest i is written last
    if (to_[i] != absent) from[to_[i]] = static_cast<NodeId>(i);
  return Numbering(std::move(from), to_.size());
}

std::vector<std::size_t> Numbering::present() const {
  std::vector<std::size_t> out;
  for (std::size_t i = 0; i < to_.size(); ++i)
    if (to_[i] != absent) out.push_back(i);
  return out;
}

std::vector<std::size_t> Numbering::missing() const {
  std::vector<std::size_t> out;
  for (std::size_t i = 0; i < to_.size(); ++i)
    if (to_[i] == absent) out.push_back(i);
  return out;
}

Numbering Numbering::restricted(std::span<const std::size_t> picked) const {
  std::vector<NodeId> to(picked.size());
  for (std::size_t k = 0; k < picked.size(); ++k) {
    if (picked[k] >= to_.size())
      throw InternalError("Numbering::restricted: element " + std::to_string(picked[k]) +
                          " of a space of " + std::to_string(to_.size()));
    to[k] = to_[picked[k]];
  }
  return Numbering(std::move(to), target_size_);
}

namespace {
// Every entry present and below `limit`: gathering through an absent entry is a logic error.
void check_gather(const Numbering& source, std::size_t limit, const char* what) {
  for (std::size_t i = 0; i < source.size(); ++i)
    if (!source.has(i) || source[i] >= limit)
      throw InternalError(std::string(what) + ": entry " + std::to_string(i) +
                          " names no source among " + std::to_string(limit));
}
}  // namespace

PointSet gather_rows(const PointSet& rows, const Numbering& source_of_row) {
  check_gather(source_of_row, rows.rows, "gather_rows");
  PointSet out(source_of_row.size(), rows.cols);
  for (std::size_t i = 0; i < out.rows; ++i)
    std::copy_n(rows.row(source_of_row[i]), rows.cols, out.row(i));
  return out;
}

void gather_columns(DistanceRows& rows, const Numbering& source_of_column) {
  check_gather(source_of_column, rows.cols, "gather_columns");
  const std::size_t width = source_of_column.size();
  const std::span<const NodeId> source = source_of_column.values();
  // Rows are independent, so they are gathered in parallel (one row of scratch per chunk of
  // rows) and the bytes do not depend on the thread count.
  constexpr std::size_t kRowsPerChunk = 16;
  if (width == rows.cols) {
    detail::parallel_chunks(rows.rows, kRowsPerChunk, {}, "map rows",
                            [&](std::size_t b, std::size_t e) {
                              std::vector<float> scratch(width);
                              for (std::size_t l = b; l < e; ++l) {
                                float* row = rows.row(l);
                                std::copy_n(row, width, scratch.data());
                                for (std::size_t c = 0; c < width; ++c) row[c] = scratch[source[c]];
                              }
                            });
    return;
  }
  RowValues values(rows.rows * width);  // every entry written below
  detail::parallel_chunks(rows.rows, kRowsPerChunk, {}, "map rows",
                          [&](std::size_t b, std::size_t e) {
                            for (std::size_t l = b; l < e; ++l) {
                              const float* from = rows.row(l);
                              float* to = values.data() + l * width;
                              for (std::size_t c = 0; c < width; ++c) to[c] = from[source[c]];
                            }
                          });
  rows.values = std::move(values);
  rows.cols = width;
}

}  // namespace unfurl
