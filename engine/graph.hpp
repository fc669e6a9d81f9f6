// The neighbour graph: weighted, undirected, in compressed sparse row form.
// - Node ids are NodeId (uint32_t); edge offsets are 64-bit.
// - Every undirected edge {i, j} is stored twice, as i->j and j->i, with the same length.
// - Lengths are Euclidean (not squared), float32, finite and >= 0. There is no sentinel for
//   "no edge": an absent edge is simply not stored.
// - The neighbours of node i are targets[offsets[i] .. offsets[i+1]), sorted by target id.
#pragma once

#include <cstdint>
#include <vector>

#include "engine/points.hpp"

namespace unfurl {

struct NeighbourGraph {
  std::vector<std::int64_t> offsets;  // nodes() + 1 entries, offsets[0] == 0
  std::vector<NodeId> targets;        // offsets.back() entries
  std::vector<float> lengths;         // same size as targets

  std::size_t nodes() const { return offsets.empty() ? 0 : offsets.size() - 1; }
  std::size_t directed_edges() const { return targets.size(); }
  std::size_t degree(std::size_t i) const {
    return static_cast<std::size_t>(offsets[i + 1] - offsets[i]);
  }
};

}  // namespace unfurl
