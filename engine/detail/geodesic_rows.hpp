// Pieces of the geodesic stage shared with the landmark picker, which computes its rows in
// steps while it chooses (engine/landmarks.cpp).
#pragma once

#include <cstddef>

#include "engine/distance_rows.hpp"
#include "engine/graph.hpp"
#include "engine/stop.hpp"

namespace unfurl::detail {

// Fills rows [first, first + count) of `rows` (whose sources and shape are already set).
void fill_geodesic_rows(const NeighbourGraph& graph, DistanceRows& rows, std::size_t first,
                        std::size_t count, StopToken stop);
// Throws DataError unless the CSR arrays are consistent, every target is a node and every
// length is finite and >= 0 (a malformed graph must not crash Dijkstra).
void check_graph(const NeighbourGraph& graph);
// The error raised when `unreachable` nodes cannot be reached from `source`.
[[noreturn]] void throw_unreachable(std::size_t unreachable, std::size_t nodes, NodeId source);

}  // namespace unfurl::detail
