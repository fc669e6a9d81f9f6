// What `unfurl sweep` shows and writes: the table on stdout, sweep.csv, sweep.json, the
// figures (residual variance against dimensions, T and C against the setting, the
// recommended map) and report.html, all from one SweepResult.
#pragma once

#include <cstddef>
#include <filesystem>
#include <string>

#include <nlohmann/json.hpp>

#include "engine/sweep.hpp"
#include "io/atomic_output.hpp"

namespace unfurl::app {

// The table as printed: one line per setting and one for PCA, then the flags.
std::string sweep_table(const SweepResult& r, const SweepOptions& o);

// sweep.csv: a header, one row per setting, the PCA row last (rule "pca").
std::string sweep_csv(const SweepResult& r, const SweepOptions& o);

// sweep.json: every figure of the table, the parameters and the recommendation.
nlohmann::json sweep_json(const SweepResult& r, const SweepOptions& o);

// The files of --out-dir DIR, declared before any work.
struct SweepFiles {
  std::size_t csv = 0, json = 0, residual = 0, scores = 0, map = 0, report = 0;
};
SweepFiles add_sweep_files(io::OutputSet& outputs, const std::filesystem::path& folder);

// Writes every file of `files` (the figures and the report page from `doc`, sweep_json's
// document); the caller commits.
void write_sweep_files(io::OutputSet& outputs, const SweepFiles& files, const SweepResult& r,
                       const SweepOptions& o, const nlohmann::json& doc,
                       const std::string& input_name);

}  // namespace unfurl::app
