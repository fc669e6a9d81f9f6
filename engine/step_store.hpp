// Where the embedding keeps the results of its steps as they complete, so that a stopped or
// killed run can resume from them. apps/ passes one backed by files (io/work_folder.hpp);
// the engine only asks for a step's result before running it and hands it over after, and
// never learns where or how it is kept. Which parameters a saved result belongs to is the
// store's business: a load returns nothing when no whole result for this run is kept.
//
// Saved steps: the neighbour graph, the nodes the rows run over (short circuits, components
// and node order, with the graph step's numberings and summaries: a run that takes them back
// reads no graph), the residual variance's source rows in batches, the landmark choice, the
// landmark rows in batches (exact mode: none of these three), the map (spectrum and
// coordinates with the landmarks they came from), the residual variance curve, and the scores
// (asked for by apps/, which runs them). With the map saved, the rows are not read back
// unless the result must carry them.
//
// A store may save in the background. Calls come from one thread at a time, not always the
// same one (row batches are saved by the thread that finished them). save_graph, save_nodes,
// save_rows and save_residual_rows may keep reading the arrays they were given until flush()
// returns, so the engine keeps them alive and unchanged until then: a StoreFlush declared after
// them flushes before they go, also when an exception unwinds.
#pragma once

#include <cstddef>
#include <exception>
#include <optional>
#include <vector>

#include "engine/assessment.hpp"
#include "engine/distance_rows.hpp"
#include "engine/embedding_steps.hpp"
#include "engine/landmarks.hpp"
#include "engine/quality_residual.hpp"
#include "engine/short_circuit.hpp"
#include "engine/spectral.hpp"

namespace unfurl {

// The nodes step: what short circuits, components and node order make of the graph, and what
// the steps after them read of the graph step. Node ids are the graph's (before components).
struct NodesStep {
  Numbering node_of_point;                      // the graph step's (identity for a given graph)
  Numbering point_of_node;                      // the graph step's
  std::optional<GraphSummary> graph;            // the graph step's (absent for a given graph)
  std::optional<IntrinsicDimension> dimension;  // the graph step's
  std::optional<ShortCircuitResult> short_circuits;  // with EmbedOptions.short_circuits
  ComponentSummary components;
  std::vector<BridgeEdge> bridges;
  Numbering connected_of_node;  // graph node of each connected node (ComponentResult.old_of_new)
  OrderedGraph ordered;         // the connected graph in node order
};

// The map step: what map_nodes gave and the landmarks it was made from.
struct MapStep {
  SpectralResult spectral;      // coords row v: ordered node v
  std::vector<NodeId> sources;  // ordered node of each landmark (every node in exact mode)
  LandmarkSummary landmarks;    // of the landmark step (exact mode: the geodesic rows')
};

class StepStore {
 public:
  virtual ~StepStore() = default;

  // The graph step; node_points is left empty (the caller gathers it again from the points).
  virtual std::optional<NodeGraph> load_graph() = 0;
  virtual void save_graph(const NodeGraph& graph) = 0;

  // The nodes step. A store that holds it need not be asked for the graph.
  virtual std::optional<NodesStep> load_nodes() = 0;
  virtual void save_nodes(const NodesStep& nodes) = 0;

  // The landmark choice of choose_landmarks: sources and summary, rows.values empty.
  virtual std::optional<LandmarkResult> load_landmarks() = 0;
  virtual void save_landmarks(const LandmarkResult& choice) = 0;

  // Batch `batch` of the landmark rows: rows [first, first + count) of `rows`, whose sources
  // and shape are set. load_rows fills them and returns true, or returns false.
  virtual bool load_rows(std::size_t batch, DistanceRows& rows, std::size_t first,
                         std::size_t count) = 0;
  virtual void save_rows(std::size_t batch, const DistanceRows& rows, std::size_t first,
                         std::size_t count) = 0;

  virtual std::optional<MapStep> load_map() = 0;
  virtual void save_map(const MapStep& map) = 0;

  // Batch `batch` of the residual variance's source rows (engine/quality_residual.hpp's
  // ResidualPlan): they depend on the graph and the seed only, so they are made before the
  // landmark rows and a run stopped late in those keeps them. has_residual_rows: a piece is
  // kept (unchecked: the load may still find it damaged or saved for other parameters).
  // load_residual_rows fills `rows`, whose sources and shape are set, and returns true, or
  // returns false.
  virtual bool has_residual_rows(std::size_t batch) = 0;
  virtual bool load_residual_rows(std::size_t batch, DistanceRows& rows) = 0;
  virtual void save_residual_rows(std::size_t batch, const DistanceRows& rows) = 0;

  // EmbedOptions.residual's curve.
  virtual std::optional<ResidualVarianceCurve> load_residual() = 0;
  virtual void save_residual(const ResidualVarianceCurve& curve) = 0;

  // The scores of the map as assess_map gives them (the caller's options are in the key).
  virtual std::optional<Assessment> load_scores() = 0;
  virtual void save_scores(const Assessment& scores) = 0;

  // Returns once every save so far is stored or reported unsaved. A store that saves at once
  // has nothing to do.
  virtual void flush() {}
};

// Flushes a store (if any) when it goes out of scope: always, or only when an exception
// unwinds past it (the caller then keeps the arrays lent to the store alive and flushes later
// itself, so that a write overlaps what comes next).
class StoreFlush {
 public:
  enum When { always, on_unwind };
  explicit StoreFlush(StepStore* store, When when = always)
      : store_(store), unwinding_(when == always ? -1 : std::uncaught_exceptions()) {}
  ~StoreFlush() {
    if (!store_ || std::uncaught_exceptions() == unwinding_) return;
    try {
      store_->flush();
    } catch (...) {  // a failed save is the store's to report; nothing to add while unwinding
    }
  }
  StoreFlush(const StoreFlush&) = delete;
  StoreFlush& operator=(const StoreFlush&) = delete;

 private:
  StepStore* store_;
  int unwinding_;  // -1: always; else the exceptions in flight when made
};

}  // namespace unfurl
