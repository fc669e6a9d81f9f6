// Short-circuit suspects: edges of a neighbour graph that probably jump across a fold or a gap
// of the manifold instead of following it. One such edge can fold the whole map, because
// every geodesic that may take the short cut does (Balasubramanian and Schwartz, "The Isomap
// algorithm and topological stability", Science 295, 2002).
//
// Criterion, in two stages (the thresholds are options; their defaults are ours, see below):
//  1. Long edge. Edge {a, b} of length w is a candidate when it is far longer than the local
//     neighbour scale of BOTH endpoints: w > length_factor * scale(a) and
//     w > length_factor * scale(b), where scale(v) is the median length of v's OTHER edges
//     (the lower median; a node without another edge has no scale, and its edges are never
//     candidates). An edge longer than the scale at one end only is a sparse point reaching
//     dense ones, not a short cut.
//  2. Detour, on the candidates only (so the check stays cheap): a Dijkstra from a to b over
//     the graph without the edge. The candidate is a suspect when that shortest path is
//     longer than detour_factor * w, or does not exist (the edge is then the only link
//     between its two sides). Along the manifold a neighbour is always reachable by a short
//     detour through common neighbours; across a gap the detour runs around the fold.
// The search settles at most max_settled nodes: a candidate whose search ran out of that
// budget before reaching detour_factor * w is "undecided" (counted, not listed). Past the
// threshold the search goes on within the same budget, so a suspect's figures say how much
// longer the detour is (exactly when it found b, else at least).
//
// Defaults (length_factor 2, detour_factor 3): common practice, no source; measured on clean
// Swiss rolls and the demo scenario (README, "Short-circuit suspects").
//
// What it does not see: many short cuts side by side (a large k over a narrow gap) vouch for
// each other, since removing one leaves its neighbours as the detour. A jump of the residual
// variance from one setting to the next (`unfurl sweep`) shows that case.
//
// Deterministic: candidates are taken in edge order, each search is sequential, and the
// searches run in parallel into slots of their own, so the result does not depend on the
// thread count.
#pragma once

#include <cstddef>
#include <limits>
#include <string>
#include <vector>

#include "engine/graph.hpp"
#include "engine/stop.hpp"

namespace unfurl {

struct ShortCircuitOptions {
  // Stage 1: a candidate is longer than this many times the median of each endpoint's other
  // edges. Finite, above 1.
  double length_factor = 2.0;
  // Stage 2: a suspect's detour is longer than this many times the edge (or absent). Finite,
  // above 1.
  double detour_factor = 3.0;
  // Nodes one detour search may settle (a bound on the cost per candidate). At least 1.
  std::size_t max_settled = 20000;
  // How many of the worst suspects the result lists (0: count them only).
  std::size_t worst = 10;
  // Throws OptionError naming the field.
  void validate() const;
};

// One suspect edge, with the figures that made it one.
struct ShortCircuitEdge {
  NodeId from = 0, to = 0;             // its endpoints, from < to
  float length = 0;                    // the edge's length
  float scale_from = 0, scale_to = 0;  // median length of each endpoint's other edges
  // The shortest path between the endpoints without this edge: its length when the search
  // reached `to`, else +infinity.
  double detour = std::numeric_limits<double>::infinity();
  // What the search established: `detour` when found, else the distance it covered (the
  // detour, if any, is longer).
  double detour_bound = 0;
  bool separates = false;  // no other path joins the endpoints (the search ran out of nodes)
  // How many times longer than the edge the detour is (at least, unless found).
  double stretch() const { return length > 0 ? detour_bound / length : detour_bound; }
};

struct ShortCircuitSummary {
  std::size_t edges = 0;       // undirected edges examined
  std::size_t long_edges = 0;  // stage 1 candidates
  std::size_t suspects = 0;    // stage 2: all of them, listed or not
  std::size_t undecided = 0;   // candidates whose search ran out of max_settled first
  double length_factor = 0, detour_factor = 0;  // the thresholds used
  double seconds = 0;
  std::vector<std::string>
      warnings;  // undecided candidates (the suspects are the caller's to word)
};

struct ShortCircuitResult {
  // Up to options.worst suspects, worst first: edges that separate their endpoints, then by
  // stretch(), then by length over the larger endpoint scale, then by (from, to).
  std::vector<ShortCircuitEdge> worst;
  ShortCircuitSummary summary;
};

// Finds the suspects of `graph` (CSR, both directions stored: engine/graph.hpp). Polls `stop`
// between candidates. Parallel over candidates on all OpenMP threads.
ShortCircuitResult find_short_circuits(const NeighbourGraph& graph,
                                       const ShortCircuitOptions& options = {},
                                       StopToken stop = {});

}  // namespace unfurl
