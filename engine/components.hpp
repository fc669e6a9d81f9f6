// Connected components of a neighbour graph and what to do when there is more than one.
// Geodesics across components do not exist; this stage makes that explicit (fail), drops
// all but the largest component (largest), or joins them by the shortest true distances
// between their points (bridge) and reports every edge it added.
#pragma once

#include <cstddef>
#include <span>
#include <string>
#include <vector>

#include "engine/graph.hpp"
#include "engine/numbering.hpp"
#include "engine/points.hpp"
#include "engine/stop.hpp"

namespace unfurl {

struct ComponentLabels {
  std::size_t count = 0;
  std::vector<std::uint32_t> label;  // per node; components numbered by their smallest node
  std::vector<std::size_t> size;     // per component, in nodes
};

// Union-find over the edges; labels do not depend on edge order.
ComponentLabels connected_components(const NeighbourGraph& graph);

enum class ComponentPolicy {
  fail,     // more than one component: DataError listing the sizes
  largest,  // keep the largest component (ties: the one holding the smallest node)
  bridge,   // add the edges of a minimum spanning forest over components (needs points)
};
const char* component_policy_name(ComponentPolicy policy);

struct ComponentOptions {
  ComponentPolicy policy = ComponentPolicy::fail;  // what to do with several components
  std::size_t sizes_in_message = 5;  // fail: how many of the largest sizes the error lists
  void validate() const;             // sizes_in_message >= 1
};

struct BridgeEdge {
  NodeId from = 0;  // node in the input graph
  NodeId to = 0;
  float length = 0.0f;  // Euclidean distance between the two nodes' points
};

struct ComponentSummary {
  std::size_t components = 0;      // before the policy was applied
  std::vector<std::size_t> sizes;  // all component sizes, largest first
  std::size_t dropped_nodes = 0;   // largest: nodes outside the kept component
  std::size_t bridges = 0;         // bridge: edges added (components - 1)
  double seconds = 0.0;
  std::vector<std::string> warnings;
};

struct ComponentResult {
  NeighbourGraph graph;  // connected; empty when the input already was (see below)
  // The input itself when it was connected already: not copied (880 MB at 10M points), so
  // the input must outlive this result. Read the graph through connected_graph().
  const NeighbourGraph* unchanged = nullptr;
  Numbering old_of_new;             // node of the input graph for each node of `graph`
  std::vector<NodeId> dropped;      // largest: input nodes left out, ascending
  std::vector<BridgeEdge> bridges;  // bridge: edges added, shortest first
  ComponentSummary summary;

  const NeighbourGraph& connected_graph() const { return unchanged ? *unchanged : graph; }
};

// node_points row v holds the coordinates of node v (bridge only; may be empty otherwise).
// Bridging finds each edge exactly: for every component, the closest pair of points between
// it and the rest, merged Boruvka-style, which yields a minimum spanning forest of the
// complete graph of inter-component distances.
ComponentResult make_connected(const NeighbourGraph& graph, const ComponentOptions& options,
                               const PointSet& node_points = {}, StopToken stop = {});

// Input rows whose node was dropped (largest), ascending: node_of_point as the graph stage
// returned it, so that the map can report every row it left out.
std::vector<std::size_t> dropped_rows(std::span<const NodeId> node_of_point,
                                      const ComponentResult& result);

}  // namespace unfurl
