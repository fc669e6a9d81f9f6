// Landmarks: the few source nodes whose geodesic rows landmark MDS needs (de Silva and
// Tenenbaum 2004), picked by greedy maxmin (farthest point) or uniformly at random.
//
// Threads and determinism. Greedy maxmin is sequential: landmark k + 1 is the node farthest
// from landmarks 0..k. The picker therefore splits the work in two:
// - the choice runs on one thread and keeps, for every node, its distance to the nearest
//   landmark so far; after each pick a pruned Dijkstra lowers those distances, visiting only
//   the nodes whose distance actually drops (about N / k nodes for the k-th pick), so the
//   choice costs a few full Dijkstra runs in total;
// - each picked landmark's full row is an OpenMP task that the other threads (and the
//   choosing thread, once done) run while the choice goes on.
// The choice reads only the pruned distances, never the rows, so it is exactly the greedy
// maxmin sequence whatever the thread count; rows are computed by one thread each. Same
// graph and seed, same bytes.
#pragma once

#include <cstddef>
#include <cstdint>
#include <functional>
#include <span>
#include <string>
#include <variant>
#include <vector>

#include "engine/distance_rows.hpp"
#include "engine/graph.hpp"
#include "engine/stop.hpp"

namespace unfurl {

enum class Pick {
  maxmin,  // first landmark drawn from the seed, each next the node farthest from those chosen
  random,  // `count` distinct nodes drawn uniformly from the seed
};

// The automatic count for a map of `dims` axes: min(N, max(dims + 1, 128)), from measured
// quality (bench/RESULTS.md, "Landmark count from data"): 2-D maps of three data sets scored
// no better with 256 to 2,048 landmarks or exact mode than with 32 to 128, while the rows
// cost time and memory in proportion to L (128 rows of a million nodes: 0.5 GB of float32).
std::size_t default_landmark_count(std::size_t nodes, std::size_t dims);

// How many landmarks: exactly one of the automatic count, a given count, or every node (the
// embedding's exact mode: N x N geodesics, no landmark approximation).
struct AutomaticLandmarks {};
struct LandmarkCount {
  std::size_t count = 256;  // at least 2 (a map needs dims + 1) and at most the graph's nodes
};
struct AllLandmarks {};
using LandmarkChoice = std::variant<AutomaticLandmarks, LandmarkCount, AllLandmarks>;

struct LandmarkOptions {
  // Landmarks to pick. Automatic: default_landmark_count(N, dims) for the map the caller
  // makes (the embedding knows its dims; this stage alone assumes 2). All: every node, in
  // pick order.
  LandmarkChoice count = AutomaticLandmarks{};
  Pick pick = Pick::maxmin;  // how to pick them
  std::uint64_t seed = 1;    // first maxmin landmark, or the whole random draw
  // Empty, or the nodes listed in the caller's own numbering (draw_order[i] is the graph node
  // the caller calls i): seeded draws index this list, so a renumbering of the graph for
  // speed does not change which nodes the seed picks. Must outlive the call.
  std::span<const NodeId> draw_order;

  // Throws OptionError naming the field: a given count below 2 or above nodes.
  void validate(std::size_t nodes) const;
  // The number of landmarks for a graph of `nodes` nodes and a map of `dims` axes.
  std::size_t resolved_count(std::size_t nodes, std::size_t dims = 2) const;
};

struct LandmarkSummary {
  std::size_t landmarks = 0;      // rows picked
  std::size_t nodes = 0;          // graph nodes
  Pick pick = Pick::maxmin;       // rule used
  double coverage_radius = 0.0;   // maxmin: largest distance from a node to its nearest landmark
  std::size_t choice_visits = 0;  // maxmin: nodes settled by the pruned Dijkstra runs
  double seconds = 0.0;           // wall time: choice and rows
  int threads = 0;                // OpenMP threads
  std::vector<std::string> warnings;  // e.g. landmarks that coincide (duplicate points)
};

struct LandmarkResult {
  DistanceRows rows;  // sources = the landmarks in pick order; L x N geodesic distances
  LandmarkSummary summary;
};

// Throws OptionError for bad options, DataError when the graph is malformed or not
// connected, InterruptedError when `stop` is requested (polled before every pick and row).
LandmarkResult pick_landmarks(const NeighbourGraph& graph, const LandmarkOptions& options,
                              StopToken stop = {});

// What a caller that saves the rows as they come (resume) learns while they are computed.
struct LandmarkHooks {
  // Once, on the choosing thread, when every source is chosen and the summary is final but for
  // its seconds; rows may still be computing: read rows.sources and the summary only.
  std::function<void(const DistanceRows& rows, const LandmarkSummary& summary)> chosen;
  // Once per row, on the thread that computed it, once its values are written (random picks:
  // after the last row). Rows finish in any order.
  std::function<void(const DistanceRows& rows, std::size_t row)> row_done;
};

// pick_landmarks into `result`, calling `hooks` on the way (an exception from a hook ends the
// pick and is rethrown). `result` is the caller's, so that rows a hook handed on stay valid
// while an exception unwinds. Same bytes as pick_landmarks.
void pick_landmarks_into(const NeighbourGraph& graph, const LandmarkOptions& options,
                         LandmarkResult& result, const LandmarkHooks& hooks, StopToken stop = {});

// The choice alone, for a caller that computes the rows in batches it can save (resume):
// the sources and summary pick_landmarks gives, in its order, with rows.values left empty.
// Maxmin then runs its choice on one thread before any row instead of beside them.
LandmarkResult choose_landmarks(const NeighbourGraph& graph, const LandmarkOptions& options,
                                StopToken stop = {});

// Rows [first, first + count) of `rows` (sources set, values sized rows x graph nodes): one
// Dijkstra run per source, the same bytes pick_landmarks gives for that source.
void fill_landmark_rows(const NeighbourGraph& graph, DistanceRows& rows, std::size_t first,
                        std::size_t count, StopToken stop = {});

}  // namespace unfurl
