// Exact neighbour ranks in a few dimensions by counting in a k-d tree instead of scanning
// every point: a box entirely nearer than the threshold counts whole, one entirely farther
// counts nothing, and only leaves the threshold cuts are compared point by point. Distances
// and ranks follow neighbour_scan.hpp's convention and bits (exact_squared_to), and box
// distances are summed in the same order, so rounding (monotone) keeps every point's
// distance between its box's nearest and farthest: the counts are exact, no margin needed.
#pragma once

#include <cstddef>
#include <vector>

#include "engine/detail/neighbour_scan.hpp"
#include "engine/points.hpp"

namespace unfurl::detail {

class RankTree {
 public:
  explicit RankTree(const PointSet& points);  // builds the tree (one thread)

  // The `count` first neighbours of row `self` in ranking order, with exact distances.
  void nearest(std::size_t self, std::size_t count, std::vector<Ranked>& out) const;

  // The 1-based rank of row j (not self) among row self's neighbours.
  std::size_t rank(std::size_t self, NodeId j) const;

 private:
  struct Node {
    std::size_t begin, end;           // positions in order_
    std::size_t left = 0, right = 0;  // children (0: a leaf; the root is never a child)
  };
  struct Keyed {
    float key;
    NodeId position;
  };
  struct Scratch {  // one build's working space, reused by every node
    std::vector<Keyed> keys;
    std::vector<NodeId> ids;
    std::vector<float> rows;
  };
  std::size_t build(std::size_t begin, std::size_t end, Scratch& scratch);
  // Squared distance to the box's nearest or farthest corner, rounded as points' distances.
  double box_distance(const double* q, std::size_t node, bool farthest) const;
  void search(const double* q, std::size_t self, std::size_t node, std::size_t count,
              std::vector<Ranked>& heap) const;
  std::size_t count_before(const double* q, std::size_t self, const Ranked& bound,
                           std::size_t node) const;

  const PointSet& points_;
  std::size_t d_;
  std::vector<NodeId> order_;  // point ids in leaf order
  std::vector<NodeId> where_;  // position of each id in order_
  std::vector<float> rows_;    // the points in leaf order, row-major
  std::vector<Node> nodes_;
  std::vector<float> low_, high_;  // per node: its box, d values each
};

}  // namespace unfurl::detail
