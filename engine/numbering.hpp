// Numberings: maps from one index space into another (input rows -> graph nodes, graph
// nodes -> connected nodes, connected nodes -> nodes in memory order, ...). Entry i is the
// index in the target space of element i, or `absent` when element i has no counterpart
// there (a row whose node was dropped). One type for all of them, so that a chain of stages
// maps back to input rows by composition instead of by hand-written index loops.
#pragma once

#include <cstddef>
#include <limits>
#include <span>
#include <vector>

#include "engine/distance_rows.hpp"
#include "engine/points.hpp"

namespace unfurl {

class Numbering {
 public:
  static constexpr NodeId absent = std::numeric_limits<NodeId>::max();

  Numbering() = default;
  // Entry i of `to` is the target of element i (or absent); every other entry must be below
  // target_size (InternalError otherwise: numberings are built by the engine, not read).
  Numbering(std::vector<NodeId> to, std::size_t target_size);
  static Numbering identity(std::size_t n);

  std::size_t size() const { return to_.size(); }  // elements of the source space
  std::size_t target_size() const { return target_size_; }
  const NodeId& operator[](std::size_t i) const { return to_[i]; }
  bool has(std::size_t i) const { return to_[i] != absent; }
  std::span<const NodeId> values() const { return to_; }

  // i -> next[this[i]]: absent where either step is absent. next.size() must equal
  // target_size().
  Numbering then(const Numbering& next) const;
  // Target j -> the smallest i with this[i] == j, absent when none: the exact inverse of a
  // permutation, and for a many-to-one map (duplicate rows sharing a node) its first member.
  Numbering inverse() const;
  // The elements that have a target, ascending; and those that have none.
  std::vector<std::size_t> present() const;
  std::vector<std::size_t> missing() const;
  // The elements `picked` (ascending or not) as a numbering of their own: k -> this[picked[k]].
  Numbering restricted(std::span<const std::size_t> picked) const;

 private:
  std::vector<NodeId> to_;
  std::size_t target_size_ = 0;
};

// Row i of the result is row source_of_row[i] of `rows` (every entry present, below rows.rows).
PointSet gather_rows(const PointSet& rows, const Numbering& source_of_row);

// Column c of every row becomes old column source_of_column[c]; sources are untouched. When
// the width stays the same the rows are rewritten in place through one row of scratch, so the
// L x N rows, the largest array of a landmark run, exist once; otherwise a new array of the
// new width replaces the old one.
void gather_columns(DistanceRows& rows, const Numbering& source_of_column);

}  // namespace unfurl
