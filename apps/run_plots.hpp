// `embed --plots-dir DIR`: the run's figures (PNG) and its report page, written into the
// run's output set beside the map and committed with it.
#pragma once

#include <cstddef>
#include <filesystem>
#include <optional>
#include <string>

#include <nlohmann/json.hpp>

#include "io/atomic_output.hpp"
#include "io/map_file.hpp"

namespace unfurl::app {

struct RunPlots {
  std::filesystem::path folder;
  std::size_t map = 0, residual = 0, scores = 0, spectrum = 0, report = 0;
  std::optional<std::size_t> map_by_terms;  // when the run stores per-point terms
};

// Declares the files in `folder` (which must exist): map.png, residual_variance.png,
// scores.png, spectrum.png, report.html, and map_trustworthiness.png when `with_terms`;
// `label` names the folder's option in messages.
RunPlots add_run_plots(io::OutputSet& outputs, const std::filesystem::path& folder, bool with_terms,
                       const std::string& label = "--plots-dir");

// Draws the figures of `map` and writes them with the report page built from `report` (the
// run's JSON document).
void write_run_plots(io::OutputSet& outputs, const RunPlots& plots, io::MapContents map,
                     const std::string& map_name, const nlohmann::json& report);

}  // namespace unfurl::app
