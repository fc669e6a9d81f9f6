// One figure being drawn: a Cairo surface (PNG or SVG) with a title, a plot area mapped from
// data ranges, axes with ticks and labels, and a legend or colour bar in the right margin.
// Internal to io/plot: the figure functions in io/plot/figures.hpp build on it.
#pragma once

#include <cairo.h>

#include <span>
#include <string>
#include <vector>

#include "io/plot/colour_map.hpp"
#include "io/plot/figures.hpp"

namespace unfurl::io::plot::detail {

struct Range {
  double lo = 0, hi = 1;
};
// Smallest range holding every finite value of `values` (lo = hi when they are all equal;
// {0, 1} when none is finite).
Range range_of(const std::vector<double>& values);
// `r` widened by `fraction` of its width on each side (a unit width around a single value).
Range padded(Range r, double fraction);

// Tick positions at "nice" steps (1, 2 or 5 times a power of ten) inside `r`, about `target`
// of them (Heckbert, "Nice numbers for graph labels", Graphics Gems, 1990).
std::vector<double> nice_ticks(Range r, int target, double* step = nullptr);
// A tick label with as many decimals as `step` needs ("0.25", "1e+06").
std::string tick_label(double value, double step);
// Multiples of `step` inside `r`.
std::vector<double> ticks_at(Range r, double step);

// Ticks of a logarithmic axis, whose positions are log10 of the values (`r` in those units):
// every power of ten, with 2 and 5 times each when the axis spans less than two decades; an
// axis too short for three of those gets nice_ticks of the values themselves.
std::vector<double> log_ticks(Range r);
// The labels of the values 10^t at the log ticks t of one axis: plain ("10,000", "0.002")
// while every tick reads well so, else powers of ten for all of them ("1e4", "1e6",
// "2e-5"), so that one axis never mixes the two forms.
std::vector<std::string> log_tick_labels(std::span<const double> ticks);

// "1,234,567".
std::string count_text(std::size_t n);

struct Box {
  double x = 0, y = 0, w = 0, h = 0;
};

struct LegendEntry {
  std::string text;
  Rgb colour;
  enum class Mark { line, box, dashed } mark = Mark::line;
};

class Chart {
 public:
  Chart(ImageFormat format, FigureSize size);
  ~Chart();
  Chart(const Chart&) = delete;
  Chart& operator=(const Chart&) = delete;

  cairo_t* cr() const { return cr_; }
  // Reserves `pixels` on the right of the plot area (legend, colour bar) and sets the plot box.
  void reserve_right(double pixels);
  // Maps data ranges onto the plot box; with equal_aspect one data unit is as long on both
  // axes and the box shrinks (centred) to fit.
  void set_ranges(Range x, Range y, bool equal_aspect);
  const Box& plot() const { return plot_; }
  double px(double x) const;
  double py(double y) const;

  void title(const std::string& title, const std::string& subtitle);
  // Frame, ticks and their labels, light grid lines, axis labels. integer_x: ticks on whole
  // numbers only (dimensions, ranks, k). y_ticks false: the caller labels the y axis.
  // log_x, log_y: the axis' data are log10 of the values, ticked and labelled as values.
  void axes(const std::string& x_label, const std::string& y_label, bool integer_x = false,
            bool y_ticks = true, bool log_x = false, bool log_y = false);
  // Legend in the right margin, top aligned with the plot box.
  void legend(const std::vector<LegendEntry>& entries);
  // A vertical colour bar (viridis) in the right margin for values lo..hi; the tick labels
  // come from `label_of` applied to positions in [0, 1].
  void colour_bar(Range values, const std::string& label, bool log_scale);
  // Width in pixels of the widest of `texts` at the normal font size.
  double text_width(const std::vector<std::string>& texts);
  // A line of text; h_align, v_align: 0 left/top, 0.5 centre, 1 right/bottom.
  void text(double x, double y, const std::string& s, double h_align, double v_align, double size,
            bool bold = false, double angle = 0);
  void set_colour(Rgb c, double alpha = 1);

  // Finishes the surface and returns the file's bytes.
  std::string finish();

  static constexpr double font_size = 13;
  // The fixed margins around the plot box (without the reserved right part).
  static constexpr double frame_width = 86 + 24, frame_height = 64 + 58;

 private:
  ImageFormat format_;
  FigureSize size_;
  std::string svg_bytes_;
  cairo_surface_t* surface_ = nullptr;
  cairo_t* cr_ = nullptr;
  Box plot_;
  Range x_, y_;
  bool equal_aspect_ = false;
  double right_ = 0;
};

}  // namespace unfurl::io::plot::detail
