// Assembly of the symmetric CSR graph from undirected edges. Internal.
#pragma once

#include <cstddef>
#include <vector>

#include "engine/graph.hpp"

namespace unfurl::detail {

struct Edge {
  NodeId from = 0;
  NodeId to = 0;
  float length = 0.0f;
};

// Stores every edge in both directions, neighbours sorted by target; an edge listed more
// than once (either direction) is stored once with its first length. Loops are dropped.
// Callers check beforehand that repeated edges agree in length.
NeighbourGraph symmetric_csr(std::size_t nodes, const std::vector<Edge>& edges);

}  // namespace unfurl::detail
