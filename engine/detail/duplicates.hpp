// Exact duplicate rows (equal in every coordinate; -0 equals +0, and equal row keys when the
// points carry them: rows that differ as read are never merged). Internal to the graph stage.
#pragma once

#include <cstddef>
#include <vector>

#include "engine/points.hpp"
#include "engine/stop.hpp"

namespace unfurl::detail {

struct DuplicateGroups {
  std::vector<NodeId> node_of_point;       // rows -> group id, groups numbered by first row
  std::vector<std::size_t> point_of_node;  // group -> its first (smallest) row
  std::size_t groups_with_copies = 0;      // groups of two or more rows
  std::size_t extra_rows = 0;              // rows beyond the first of each group
  std::size_t equal_after_narrowing = 0;   // rows equal to an earlier row only in float32
};

DuplicateGroups find_duplicates(const PointSet& points, StopToken stop);

// The rows point_of_node[0..), copied in that order.
PointSet select_rows(const PointSet& points, const std::vector<std::size_t>& rows);

}  // namespace unfurl::detail
