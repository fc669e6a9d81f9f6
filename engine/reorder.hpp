// Node orders for memory locality: shortest-path searches walk the graph's neighbourhoods,
// and when neighbouring nodes sit close in memory the walks stay in cache. A renumbering
// changes only the ids; callers map results back to input order with old_of_new.
#pragma once

#include <vector>

#include "engine/graph.hpp"
#include "engine/numbering.hpp"
#include "engine/points.hpp"

namespace unfurl {

struct Renumbering {
  Numbering new_of_old;  // old id -> new id (a permutation)
  Numbering old_of_new;  // new id -> old id (its inverse)
};

enum class NodeOrder {
  input,        // identity
  bfs,          // reverse Cuthill-McKee: breadth-first from a far node, low degree first
  morton,       // Z-order curve over the first 3 principal coordinates of the points (axes
                // from at most 8,192 evenly spread rows: detail::fit_pca_top)
  tree_leaves,  // the leaf order of a k-d tree over the points
};
const char* node_order_name(NodeOrder order);

// bfs needs only the graph; morton and tree_leaves need node_points (row v = node v).
Renumbering node_order(NodeOrder order, const NeighbourGraph& graph,
                       const PointSet& node_points = {});

// The same graph with node v renamed r.new_of_old[v]; neighbours re-sorted by target.
NeighbourGraph renumber(const NeighbourGraph& graph, const Renumbering& r);

}  // namespace unfurl
