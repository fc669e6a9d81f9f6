// Geodesic distance rows from a set of source nodes (landmarks, or every node in exact mode):
// rows x cols float32, row-major; row r holds the distances from node sources[r] to every node
// 0..cols-1 of the graph. Every stored value is finite: unreachable nodes are an error raised
// by the stage that computes the rows, never a sentinel stored here.
#pragma once

#include <cstddef>
#include <vector>

#include "engine/points.hpp"
#include "engine/row_storage.hpp"

namespace unfurl {

struct DistanceRows {
  std::size_t rows = 0;         // number of sources
  std::size_t cols = 0;         // number of graph nodes
  std::vector<NodeId> sources;  // rows entries: the node each row starts from
  RowValues values;             // rows * cols; resize leaves them unset (row_storage.hpp)

  float* row(std::size_t r) { return values.data() + r * cols; }
  const float* row(std::size_t r) const { return values.data() + r * cols; }
};

}  // namespace unfurl
