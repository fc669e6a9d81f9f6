// Neighbour graphs from given data rather than from points: an edge list, or a partial
// distance matrix whose given entries become edges. Shortest paths over such a graph later
// complete the matrix, the classical completion step of Isomap (Tenenbaum, de Silva and
// Langford, Science 2000). The readers in io/ produce the raw arrays taken here.
#pragma once

#include <cstddef>
#include <span>

#include "engine/graph.hpp"

namespace unfurl {

// Undirected edges from[i] - to[i] of length length[i], stored both ways. An edge may be
// listed twice (either direction) with the same length; loops (from == to) carry no path
// information and are skipped. DataError, naming the edge index, for ids >= nodes, negative
// or non-finite lengths, arrays of unequal size, and an edge listed twice with different
// lengths (naming both indices).
NeighbourGraph graph_from_edges(std::size_t nodes, std::span<const NodeId> from,
                                std::span<const NodeId> to, std::span<const float> length);

// n x n row-major distances, NaN meaning "not given". Entry (i, j) becomes edge i - j. The
// diagonal must be 0 or NaN; when both (i, j) and (j, i) are given they must be equal;
// given entries must be finite and >= 0. DataError names the row and column at fault.
NeighbourGraph graph_from_partial_distances(std::size_t n, std::span<const float> distances);

}  // namespace unfurl
