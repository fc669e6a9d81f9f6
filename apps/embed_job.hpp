// The embed job shared by `unfurl embed` and `unfurl demo`: points in memory -> graph ->
// map -> scores -> map file (and CSV/JSON when asked).
#pragma once

#include <string>

#include <nlohmann/json.hpp>

#include "apps/args.hpp"
#include "apps/command.hpp"
#include "engine/embedding.hpp"
#include "io/points_reader.hpp"

namespace unfurl::app {

struct EmbedArgs {
  PointInputArgs input;
  GraphArgs graph;
  MapArgs map;
  ScoreArgs score;
  std::string output;
  std::string csv;
  std::string json;
  std::string max_memory;
  bool no_score = false;
};

// Adds every option of the embed job except the input (and the output path) to `cmd`.
void add_embed_job_options(CLI::App* cmd, EmbedArgs& args);

// Throws OutputError now, before any work, when an output named in `args` cannot be created.
void check_outputs(const EmbedArgs& args);

// Runs the job on points already read; `input` identifies them in the map's attributes.
// Returns the run's JSON report (also written to args.json when given).
nlohmann::json run_embed_job(const GlobalOptions& g, const EmbedArgs& args,
                             const io::PointReadResult& in, const nlohmann::json& input,
                             EmbedResult* result_out = nullptr);

}  // namespace unfurl::app
