// The figures unfurl draws (PNG or SVG bytes, ready for an io::OutputSet): a map, curves
// with optional intervals (residual variance against dimensions, trustworthiness and
// continuity against a setting), and an eigenvalue spectrum. Each has a title saying what it
// shows, labelled axes, and a legend or colour bar when colours carry meaning.
#pragma once

#include <filesystem>
#include <string>
#include <vector>

#include "engine/points.hpp"

namespace unfurl::io::plot {

enum class ImageFormat { png, svg };
// By the file's extension (.png, .svg, any case); OptionError naming `field` otherwise.
ImageFormat image_format_for(const std::filesystem::path& path, const std::string& field);

struct FigureSize {
  int width = 900;   // pixels (SVG: points), 320 to 8000
  int height = 700;  // 240 to 8000
  // Throws OptionError("FigureSize.width", ...) outside the ranges.
  void validate() const;
};

// What colours the points of a map.
struct PointColours {
  std::vector<double> values;  // one per map row (NaN: no value); empty: colour by density
  std::string label;           // what the values are ("column 2 of labels.csv")
  // Whole-number values with at most category_count distinct ones are drawn as categories
  // (the most frequent in a cell wins) with a legend; otherwise as a continuous scale.
  bool allow_categories = true;
};

struct MapFigure {
  const PointSet* coords = nullptr;  // N x m map
  std::size_t axis_x = 0, axis_y = 1;
  PointColours colours;
  std::string title;     // "Map of swiss.h5 (10,000 points)"
  std::string subtitle;  // a second line: what was done
};
// Points are aggregated into cells of the plot area first (1 to 4 pixels wide, smaller for
// more points), so a million points cost a million additions and the image stays one raster:
// cells are coloured by point count (log scale) or by the mean value (the most frequent
// category) of their points. Both axes share one scale, as map distances mean something.
std::string draw_map(const MapFigure& figure, ImageFormat format, FigureSize size = {});
// A figure `width` wide whose height fits the map's shape (one scale on both axes), so an
// elongated map does not float in white space; between 300 and 1.2 x width pixels high.
FigureSize fitted_map_size(const MapFigure& figure, int width = 900);

struct Series {
  std::string name;               // legend text
  std::vector<double> x, y;       // NaN y: no point
  std::vector<double> low, high;  // interval per point (empty: none)
};
struct CurveFigure {
  std::string title, subtitle, x_label, y_label;
  std::vector<Series> series;     // several: a legend names them
  bool integer_x = false;         // x takes whole numbers (dimensions, k)
  std::vector<double> y_include;  // values the y range must hold (0, or 1 for a perfect score)
  std::string empty_note;         // drawn instead when no series holds a point
  // Logarithmic axes (powers of ten ticked); values at or below zero are left out and
  // counted in the subtitle.
  bool log_x = false, log_y = false;
};
std::string draw_curves(const CurveFigure& figure, ImageFormat format, FigureSize size = {});

struct SpectrumFigure {
  std::string title, subtitle;
  std::vector<double> eigenvalues;  // as computed, descending; negatives included
  double noise_floor = 0;           // 0: none known
};
// Bars by rank on a signed logarithmic axis (sign(v) log10(1 + |v| / s), s the smallest
// magnitude shown), so small negative eigenvalues stay visible beside large positive ones.
std::string draw_spectrum(const SpectrumFigure& figure, ImageFormat format, FigureSize size = {});

}  // namespace unfurl::io::plot
