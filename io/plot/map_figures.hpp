// The figures of one map: what they need of a map file, read in one place, and the figure
// descriptions built from it (io/plot/figures.hpp draws them).
#pragma once

#include <cmath>
#include <cstdint>
#include <filesystem>
#include <optional>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "io/map_file.hpp"
#include "io/plot/figures.hpp"

namespace unfurl::io::plot {

// Trustworthiness and continuity at one neighbourhood size, as the map stores them.
struct StoredScores {
  std::size_t k = 0;
  double t = NAN, t_low = NAN, t_high = NAN;
  double c = NAN, c_low = NAN, c_high = NAN;
  std::string method;  // "exact" | "sampled"
  std::size_t sample_size = 0;
  std::vector<std::int64_t> scored_rows;  // map row of each term
  std::vector<double> t_terms, c_terms;
};

struct PlotMap {
  std::string name;  // the file's name, for titles
  PointSet coords;
  std::vector<std::int64_t> rows;  // input row of each map row
  std::vector<double> spectrum;
  nlohmann::json spectrum_attributes = nlohmann::json::object();
  std::vector<double> residual_variance;  // by dimension, 1..
  std::vector<StoredScores> scores;       // by k, ascending
  std::optional<MapGraphRecord> graph;    // absent for a linear map
  nlohmann::json attributes = nlohmann::json::object();
};

// The one adapter between the map layout and the figures: switch here when the layout moves.
PlotMap plot_map_from(io::MapContents contents, std::string name);
// Reads `path` with the current map reader (errors as io::read_map throws them).
PlotMap read_plot_map(const std::filesystem::path& path);

// What the map can be coloured by besides a file's column.
enum class TermColour { trustworthiness, continuity };
// Per map row, the term of 1 - T (or 1 - C) at the smallest stored k (NaN where the point was
// not scored); the label names the k. Throws DataError naming the file when the map has none.
PointColours term_colours(const PlotMap& map, TermColour which);

MapFigure map_figure(const PlotMap& map, PointColours colours, std::size_t axis_x = 0,
                     std::size_t axis_y = 1);
CurveFigure residual_figure(const PlotMap& map);
CurveFigure scores_figure(const PlotMap& map);
SpectrumFigure spectrum_figure(const PlotMap& map);

}  // namespace unfurl::io::plot
