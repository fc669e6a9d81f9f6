// Input-space ranks for the neighbourhood scores in high dimension. Float32 products
// (float_scan.hpp) give every distance of a block of queries with a proven error bound; only
// the points the bound leaves in doubt get their exact double distance (exact_squared_to), so
// every rank and every neighbour list equals what the direct double scan
// (neighbour_scan.hpp's DistanceScanner) gives, in the same ranking convention.
#pragma once

#include <cstddef>
#include <cstdint>
#include <span>
#include <vector>

#include "engine/detail/float_scan.hpp"
#include "engine/detail/neighbour_scan.hpp"
#include "engine/points.hpp"

namespace unfurl::detail {

// Whether the products can serve `points`: enough columns for the products to pay (the
// direct scan wins in a few dimensions) and norms whose squares float32 holds.
bool products_serve(const PointSet& points);

class ProductRanker {
 public:
  explicit ProductRanker(const PointSet& points);  // a centred float32 copy of the points

  // For each query row selves[b]: nearest[b] = its `count` first neighbours in ranking order
  // with exact distances, and ranks[b][p] = the 1-based rank of row others[b][p] among all of
  // its neighbours (others[b] distinct). One product pass serves the whole block.
  void rank(std::span<const std::uint32_t> selves, std::size_t count,
            std::span<const std::vector<NodeId>> others, std::vector<std::vector<Ranked>>& nearest,
            std::vector<std::vector<std::size_t>>& ranks) const;

 private:
  const PointSet& points_;
  ScanData scan_;
};

}  // namespace unfurl::detail
