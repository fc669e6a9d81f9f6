// The embed job shared by `unfurl embed` and `unfurl demo`: points (or a given graph) in
// memory -> preprocessing -> graph -> map -> scores -> map file (and CSV/JSON when asked).
#pragma once

#include <optional>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "apps/args.hpp"
#include "apps/command.hpp"
#include "apps/run_plots.hpp"
#include "engine/embedding.hpp"
#include "engine/preprocess.hpp"
#include "io/atomic_output.hpp"

namespace unfurl::app {

struct EmbedArgs {
  PointInputArgs input;
  std::string input_kind = "points";  // points | edges | distances | graph
  std::string missing;                // distances: the value that marks a missing entry
  GraphArgs graph;
  std::string scale = "none";
  std::string metric = "euclidean";
  std::size_t pre_pca = 0;
  MapArgs map;
  bool linear = false;
  ScoreArgs score;
  std::string output;
  std::string csv;
  std::string json;
  std::string max_memory;
  bool no_score = false;
};

// What the job starts from: points, or a graph over input rows (then `points` is empty).
struct JobInput {
  PointSet points;                         // N x d, or empty for a given graph
  std::optional<NeighbourGraph> graph;     // a given graph: nodes are input rows
  std::vector<std::int64_t> rows;          // input row of each point or node
  std::vector<std::int64_t> dropped_rows;  // rows dropped before the job (non-finite)
  std::vector<double> centres;             // column centres the reader subtracted (or empty)
  nlohmann::json identity;                 // the input's identity for the map's attributes
  StepStore* saved_steps = nullptr;
  // The saved pieces the run took back instead of computing them (filled as it runs), or none.
  const std::vector<std::string>* resumed_from =
      nullptr;                   // embed's work folder (apps/work_run.hpp), or none
  std::uint64_t held_bytes = 0;  // the caller holds besides (demo: its scenario)
};

// Adds every option of the embed job except the input (and the output path) to `cmd`.
void add_embed_job_options(CLI::App* cmd, EmbedArgs& args);

// The size of the job's input, known before the points are (a demo's count, a point file's
// metadata).
struct JobSize {
  std::size_t points = 0;        // points, or nodes of a given graph
  std::size_t columns = 0;       // 0: a given graph
  std::size_t graph_edges = 0;   // a given graph's stored entries (both directions)
  std::uint64_t held_bytes = 0;  // the caller holds besides (demo: its scenario)
  std::string subject{};         // the size as messages name it; empty: "N points"
};

// Throws what the job would throw for its options on an input of this size, the memory
// guard included, for a caller that knows the size before it has the points (demo).
void check_job_options(const GlobalOptions& g, const EmbedArgs& args, const JobSize& size);
inline void check_job_options(const GlobalOptions& g, const EmbedArgs& args, std::size_t rows,
                              std::size_t cols) {
  check_job_options(g, args, JobSize{.points = rows, .columns = cols});
}

// The memory guard alone (apps/memory_guard.hpp), for a caller that knows the size before
// reading (a point file's metadata): ResourceError (exit 69) when the run's estimated peak
// is over --max-memory or the system's ceiling.
void check_job_memory(const GlobalOptions& g, const EmbedArgs& args, const JobSize& size);

// Where the job's outputs sit in the run's output set.
struct JobOutputs {
  std::size_t map = 0;
  std::optional<std::size_t> csv, json;
  std::optional<RunPlots> plots;  // embed --plots-dir
};

// Declares the map (named by `map_label` in messages), --csv and --json in `outputs`: an
// OutputError now, before any work, when one cannot be written safely.
JobOutputs add_job_outputs(io::OutputSet& outputs, const EmbedArgs& args,
                           const std::string& map_label = "-o",
                           const std::string& json_label = "--json");

// Runs the job, writes its outputs into `outputs` and commits the whole set (with anything
// the caller wrote into it before). Returns the run's JSON report and, when asked, the
// result itself.
nlohmann::json run_embed_job(const GlobalOptions& g, const EmbedArgs& args, JobInput input,
                             io::OutputSet& outputs, const JobOutputs& where,
                             EmbedResult* result_out = nullptr);

}  // namespace unfurl::app
