// Which options take effect in which kind of run. An option given on the command line that
// the run would not use is refused (OptionError, exit 64) before any work, never ignored and
// never recorded in the map as if it had been used. The table in option_scope.cpp is the one
// place that says so; every command describes its run as a RunShape and asks it.
#pragma once

#include <string>

#include <CLI/CLI.hpp>
#include <nlohmann/json.hpp>

#include "apps/embed_job.hpp"

namespace unfurl::app {

// What a run is, as far as the meaning of its options goes.
struct RunShape {
  std::string input_kind = "points";  // points | edges | distances | graph
  std::string input_format;           // "csv", "npy", "hdf5"...; "" when not looked at
  std::string map_format;             // score: the map file's format, like input_format
  bool linear = false;                // --linear: plain PCA, no graph
  bool exact = false;                 // --landmarks all: every node a source
  bool no_score = false;              // --no-score
  bool score_exact = false;           // --score-method exact: every point a query
  bool demo = false;                  // unfurl demo: outputs named by its --out-dir folder
  bool data_only = false;             // demo --data-only: no embedding at all
};

// The shape of an embed job (`embed` and `demo`) as its options ask for it; input_format is
// left for the caller, who knows whether the file needs looking at.
RunShape embed_run_shape(const EmbedArgs& args);

// Throws OptionError for the first option given on `cmd`'s command line that has no effect
// in a run of this shape: "--k 5: not used with --input-kind edges (...)".
void refuse_unused_options(const CLI::App& cmd, const RunShape& shape);

// Whether `option` ("--k") takes effect in a run of this shape.
bool option_used(const RunShape& shape, const std::string& option);

// `parameters` without the members ("pre_pca" for --pre-pca) whose options a run of this shape
// does not use, so that a map never records them as used.
nlohmann::json without_unused(const RunShape& shape, nlohmann::json parameters);

}  // namespace unfurl::app
