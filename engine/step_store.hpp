// Where the embedding keeps the results of its steps as they complete, so that a stopped or
// killed run can resume from them. apps/ passes one backed by files (io/work_folder.hpp);
// the engine only asks for a step's result before running it and hands it over after, and
// never learns where or how it is kept. Which parameters a saved result belongs to is the
// store's business: a load returns nothing when no whole result for this run is kept.
//
// Saved steps: the neighbour graph, the landmark choice, and the landmark rows in batches
// (exact mode saves the graph only). The steps after them (components, node order, spectrum,
// coordinates, scores) are recomputed from these: they are deterministic and short.
#pragma once

#include <cstddef>
#include <optional>

#include "engine/distance_rows.hpp"
#include "engine/embedding_steps.hpp"
#include "engine/landmarks.hpp"

namespace unfurl {

class StepStore {
 public:
  virtual ~StepStore() = default;

  // The graph step; node_points is left empty (the caller gathers it again from the points).
  virtual std::optional<NodeGraph> load_graph() = 0;
  virtual void save_graph(const NodeGraph& graph) = 0;

  // The landmark choice of choose_landmarks: sources and summary, rows.values empty.
  virtual std::optional<LandmarkResult> load_landmarks() = 0;
  virtual void save_landmarks(const LandmarkResult& choice) = 0;

  // Batch `batch` of the landmark rows: rows [first, first + count) of `rows`, whose sources
  // and shape are set. load_rows fills them and returns true, or returns false.
  virtual bool load_rows(std::size_t batch, DistanceRows& rows, std::size_t first,
                         std::size_t count) = 0;
  virtual void save_rows(std::size_t batch, const DistanceRows& rows, std::size_t first,
                         std::size_t count) = 0;
};

}  // namespace unfurl
