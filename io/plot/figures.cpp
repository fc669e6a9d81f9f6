#include "io/plot/figures.hpp"

#include <fmt/core.h>

#include <algorithm>
#include <cctype>
#include <cmath>
#include <functional>
#include <map>

#include "engine/error.hpp"
#include "io/plot/detail/chart.hpp"

namespace unfurl::io::plot {
namespace {

using detail::Chart;
using detail::LegendEntry;
using detail::Range;

const Rgb grey{0.75, 0.75, 0.75};
const Rgb vermillion{0.835, 0.369, 0.0};  // Okabe-Ito, for what is negative or wrong
const Rgb blue{0.0, 0.447, 0.698};        // Okabe-Ito
// Room right of a map for its colour bar or legend.
constexpr double map_margin_right = 130;

// The whole numbers among `values` when there are at most category_count distinct ones and
// no other finite value; else empty.
std::vector<double> categories_of(const std::vector<double>& values) {
  std::vector<double> found;
  for (double v : values) {
    if (!std::isfinite(v)) continue;
    if (v != std::round(v) || std::abs(v) > 1e9) return {};
    if (std::find(found.begin(), found.end(), v) == found.end()) {
      if (found.size() == category_count) return {};
      found.push_back(v);
    }
  }
  std::sort(found.begin(), found.end());
  return found;
}

// The value at fraction q of the sorted finite values.
double quantile(std::vector<double> v, double q) {
  v.erase(std::remove_if(v.begin(), v.end(), [](double x) { return !std::isfinite(x); }), v.end());
  if (v.empty()) return 0;
  const auto i = static_cast<std::ptrdiff_t>(q * double(v.size() - 1));
  std::nth_element(v.begin(), v.begin() + i, v.end());
  return v[static_cast<std::size_t>(i)];
}

// Per-cell accumulation of the map's points over a grid laid on the plot box.
struct Grid {
  std::size_t w = 0, h = 0;
  std::vector<std::uint32_t> count, valued;  // all points; points with a value
  std::vector<double> sum;                   // sum of values
  std::vector<std::uint32_t> per_category;   // w * h * categories
};

void paint_cells(Chart& chart, const Grid& g, double cell,
                 const std::function<bool(std::size_t, Rgb&)>& colour_of) {
  cairo_surface_t* img =
      cairo_image_surface_create(CAIRO_FORMAT_ARGB32, static_cast<int>(g.w), static_cast<int>(g.h));
  cairo_surface_flush(img);
  unsigned char* data = cairo_image_surface_get_data(img);
  const int stride = cairo_image_surface_get_stride(img);
  for (std::size_t y = 0; y < g.h; ++y) {
    auto* row = reinterpret_cast<std::uint32_t*>(data + y * static_cast<std::size_t>(stride));
    for (std::size_t x = 0; x < g.w; ++x) {
      Rgb c;
      row[x] = 0;
      if (!colour_of(y * g.w + x, c)) continue;
      auto byte = [](double v) { return static_cast<std::uint32_t>(std::lround(v * 255)); };
      row[x] = 0xFF000000u | byte(c.r) << 16 | byte(c.g) << 8 | byte(c.b);
    }
  }
  cairo_surface_mark_dirty(img);
  cairo_t* cr = chart.cr();
  cairo_save(cr);
  cairo_translate(cr, chart.plot().x, chart.plot().y);
  cairo_scale(cr, cell, cell);
  cairo_set_source_surface(cr, img, 0, 0);
  cairo_pattern_set_filter(cairo_get_source(cr), CAIRO_FILTER_NEAREST);
  cairo_paint(cr);
  cairo_restore(cr);
  cairo_surface_destroy(img);
}

}  // namespace

ImageFormat image_format_for(const std::filesystem::path& path, const std::string& field) {
  std::string ext = path.extension().string();
  for (char& c : ext) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  if (ext == ".png") return ImageFormat::png;
  if (ext == ".svg") return ImageFormat::svg;
  throw OptionError(field, path.string() +
                               ": the figure's format comes from its extension, "
                               ".png or .svg; got '" +
                               ext + "'");
}

void FigureSize::validate() const {
  if (width < 320 || width > 8000)
    throw OptionError("FigureSize.width", fmt::format("must be 320 to 8000 pixels, got {}", width));
  if (height < 240 || height > 8000)
    throw OptionError("FigureSize.height",
                      fmt::format("must be 240 to 8000 pixels, got {}", height));
}

std::vector<double> map_axis(const PointSet& p, std::size_t axis) {
  std::vector<double> v(p.rows);
  for (std::size_t i = 0; i < p.rows; ++i) v[i] = p.row(i)[axis];
  return v;
}

FigureSize fitted_map_size(const MapFigure& f, int width) {
  const PointSet& p = *f.coords;
  if (f.axis_x >= p.cols || f.axis_y >= p.cols) return {width, width * 7 / 9};
  const Range x = detail::padded(detail::range_of(map_axis(p, f.axis_x)), 0.03);
  const Range y = detail::padded(detail::range_of(map_axis(p, f.axis_y)), 0.03);
  const double box_w = width - Chart::frame_width - map_margin_right;
  const double h = box_w * (y.hi - y.lo) / (x.hi - x.lo) + Chart::frame_height;
  return {width, static_cast<int>(std::clamp(h, 300.0, 1.2 * width))};
}

std::string draw_map(const MapFigure& f, ImageFormat format, FigureSize size) {
  const PointSet& p = *f.coords;
  if (f.axis_x >= p.cols || f.axis_y >= p.cols)
    throw OptionError("MapFigure.axis_x", fmt::format("the map has {} axes; axes {} and {} asked",
                                                      p.cols, f.axis_x + 1, f.axis_y + 1));
  const std::vector<double>& values = f.colours.values;
  if (!values.empty() && values.size() != p.rows)
    throw InternalError("draw_map: colour values do not match the map's rows");
  const std::vector<double> categories =
      f.colours.allow_categories && !values.empty() ? categories_of(values) : std::vector<double>{};
  Chart chart(format, size);
  chart.reserve_right(map_margin_right);
  const std::vector<double> xs = map_axis(p, f.axis_x), ys = map_axis(p, f.axis_y);
  chart.set_ranges(detail::padded(detail::range_of(xs), 0.03),
                   detail::padded(detail::range_of(ys), 0.03), true);

  // Bigger cells for fewer points, so a small map's points stay visible.
  const double cell = p.rows > 100000 ? 1 : p.rows > 10000 ? 2 : p.rows > 2000 ? 3 : 4;
  Grid g;
  g.w = std::max<std::size_t>(1, static_cast<std::size_t>(chart.plot().w / cell));
  g.h = std::max<std::size_t>(1, static_cast<std::size_t>(chart.plot().h / cell));
  const double cell_w = chart.plot().w / double(g.w);
  g.count.assign(g.w * g.h, 0);
  g.valued.assign(g.w * g.h, 0);
  g.sum.assign(g.w * g.h, 0);
  if (!categories.empty()) g.per_category.assign(g.w * g.h * categories.size(), 0);
  for (std::size_t i = 0; i < p.rows; ++i) {
    if (!std::isfinite(xs[i]) || !std::isfinite(ys[i])) continue;
    const double fx = (chart.px(xs[i]) - chart.plot().x) / cell_w;
    const double fy = (chart.py(ys[i]) - chart.plot().y) / cell_w;
    const std::size_t cx = std::min(g.w - 1, static_cast<std::size_t>(std::max(0.0, fx)));
    const std::size_t cy = std::min(g.h - 1, static_cast<std::size_t>(std::max(0.0, fy)));
    const std::size_t c = cy * g.w + cx;
    ++g.count[c];
    if (values.empty() || !std::isfinite(values[i])) continue;
    ++g.valued[c];
    g.sum[c] += values[i];
    if (!categories.empty()) {
      const auto k =
          std::find(categories.begin(), categories.end(), values[i]) - categories.begin();
      ++g.per_category[c * categories.size() + static_cast<std::size_t>(k)];
    }
  }
  const std::uint32_t max_count = *std::max_element(g.count.begin(), g.count.end());
  std::size_t valued = 0;
  for (double v : values) valued += std::isfinite(v);

  std::string subtitle = f.subtitle;
  auto add_note = [&](const std::string& note) {
    subtitle += (subtitle.empty() ? "" : "; ") + note;
  };
  chart.axes(fmt::format("axis {}", f.axis_x + 1), fmt::format("axis {}", f.axis_y + 1));
  if (values.empty()) {
    // Density: log of the count, so a dense core does not wash out the sparse edges.
    const double top = std::log(double(std::max<std::uint32_t>(max_count, 2)));
    paint_cells(chart, g, cell_w, [&](std::size_t c, Rgb& out) {
      if (!g.count[c]) return false;
      out = max_count <= 1 ? viridis(0.0) : viridis(std::log(double(g.count[c])) / top);
      return true;
    });
    if (max_count > 1)
      chart.colour_bar({1, double(max_count)}, "points per cell (log scale)", true);
    else
      add_note("one point per cell");
  } else {
    if (valued < p.rows) {
      paint_cells(chart, g, cell_w, [&](std::size_t c, Rgb& out) {
        out = grey;
        return g.count[c] > 0;
      });
      add_note(fmt::format("grey: {} points without a value", detail::count_text(p.rows - valued)));
    }
    if (!categories.empty()) {
      const std::size_t nc = categories.size();
      paint_cells(chart, g, cell_w, [&](std::size_t c, Rgb& out) {
        if (!g.valued[c]) return false;
        const auto* counts = &g.per_category[c * nc];
        out = category_colour(
            static_cast<std::size_t>(std::max_element(counts, counts + nc) - counts));
        return true;
      });
      std::vector<LegendEntry> entries;
      for (std::size_t k = 0; k < nc; ++k)
        entries.push_back(
            {fmt::format("{:g}", categories[k]), category_colour(k), LegendEntry::Mark::box});
      chart.legend(entries);
      add_note("each cell shows its most frequent value");
    } else {
      // A few extreme values would squeeze every other colour into one end of the scale.
      Range r{quantile(values, 0.01), quantile(values, 0.99)};
      const Range full = detail::range_of(values);
      if (full.hi - full.lo <= 1.5 * (r.hi - r.lo)) r = full;
      if (r.lo > full.lo || r.hi < full.hi)
        add_note(
            fmt::format("colours clipped to the 1st-99th percentile, values span {:.3g} to {:.3g}",
                        full.lo, full.hi));
      if (!(r.hi > r.lo)) r = detail::padded(r, 0);
      paint_cells(chart, g, cell_w, [&](std::size_t c, Rgb& out) {
        if (!g.valued[c]) return false;
        out = viridis((g.sum[c] / g.valued[c] - r.lo) / (r.hi - r.lo));
        return true;
      });
      chart.colour_bar(r, f.colours.label + " (cell mean)", false);
    }
  }
  chart.title(f.title, subtitle);
  return chart.finish();
}

namespace {

// The series of `f` as drawn: on a log axis, log10 of the values, with NaN for those at or
// below zero (counted in `left_out`).
std::vector<Series> drawn_series(const CurveFigure& f, std::size_t& left_out) {
  std::vector<Series> out = f.series;
  left_out = 0;
  auto to_log = [&](std::vector<double>& v, bool counted) {
    for (double& x : v) {
      if (std::isfinite(x) && x <= 0) left_out += counted;
      x = x > 0 ? std::log10(x) : NAN;
    }
  };
  for (Series& s : out) {
    if (f.log_x) {
      for (std::size_t i = 0; i < s.x.size(); ++i)
        if (std::isfinite(s.x[i]) && s.x[i] <= 0 && std::isfinite(s.y[i])) {
          ++left_out;
          s.y[i] = NAN;  // no position on the axis
        }
      to_log(s.x, false);
    }
    if (f.log_y) {
      to_log(s.y, true);
      to_log(s.low, false);
      to_log(s.high, false);
    }
  }
  return out;
}

}  // namespace

std::string draw_curves(const CurveFigure& f, ImageFormat format, FigureSize size) {
  Chart chart(format, size);
  std::size_t left_out = 0;
  const std::vector<Series> series = drawn_series(f, left_out);
  std::vector<double> all_x, all_y;
  for (const auto& s : series)
    for (std::size_t i = 0; i < s.x.size(); ++i) {
      if (!std::isfinite(s.y[i])) continue;
      all_x.push_back(s.x[i]);
      all_y.push_back(s.y[i]);
      if (!s.low.empty()) all_y.insert(all_y.end(), {s.low[i], s.high[i]});
    }
  std::vector<std::string> names;
  for (const auto& s : series) names.push_back(s.name);
  const bool with_legend = series.size() > 1;
  chart.reserve_right(with_legend ? chart.text_width(names) + 56 : 0);
  if (!all_x.empty())
    for (double v : f.y_include)
      if (!f.log_y || v > 0) all_y.push_back(f.log_y ? std::log10(v) : v);
  Range xr = detail::padded(detail::range_of(all_x), 0.05);
  chart.set_ranges(xr, detail::padded(detail::range_of(all_y), 0.08), false);
  chart.axes(f.x_label, f.y_label, f.integer_x, true, f.log_x, f.log_y);
  std::string subtitle = f.subtitle;
  if (left_out > 0)
    subtitle += fmt::format("{}{} points at or below 0 left out of the log scale",
                            subtitle.empty() ? "" : "; ", left_out);
  chart.title(f.title, subtitle);
  if (all_x.empty()) {
    chart.set_colour({0.4, 0.4, 0.4});
    chart.text(chart.plot().x + chart.plot().w / 2, chart.plot().y + chart.plot().h / 2,
               f.empty_note.empty() ? "nothing to draw" : f.empty_note, 0.5, 0.5, 15);
    return chart.finish();
  }
  cairo_t* cr = chart.cr();
  std::vector<LegendEntry> legend;
  for (std::size_t k = 0; k < series.size(); ++k) {
    const Series& s = series[k];
    const Rgb colour = series.size() == 1 ? blue : category_colour(k);
    chart.set_colour(colour);
    cairo_set_line_width(cr, 2);
    bool drawing = false;
    for (std::size_t i = 0; i < s.x.size(); ++i) {
      if (!std::isfinite(s.y[i])) {
        drawing = false;
        continue;
      }
      if (drawing)
        cairo_line_to(cr, chart.px(s.x[i]), chart.py(s.y[i]));
      else
        cairo_move_to(cr, chart.px(s.x[i]), chart.py(s.y[i]));
      drawing = true;
    }
    cairo_stroke(cr);
    for (std::size_t i = 0; i < s.x.size(); ++i) {
      if (!std::isfinite(s.y[i])) continue;
      const double x = chart.px(s.x[i]);
      if (!s.low.empty() && std::isfinite(s.low[i]) && std::isfinite(s.high[i])) {
        cairo_set_line_width(cr, 1.5);
        cairo_move_to(cr, x, chart.py(s.low[i]));
        cairo_line_to(cr, x, chart.py(s.high[i]));
        for (double v : {s.low[i], s.high[i]}) {
          cairo_move_to(cr, x - 5, chart.py(v));
          cairo_line_to(cr, x + 5, chart.py(v));
        }
        cairo_stroke(cr);
      }
      cairo_arc(cr, x, chart.py(s.y[i]), 4, 0, 2 * M_PI);
      cairo_fill(cr);
    }
    legend.push_back({s.name, colour});
  }
  if (with_legend) chart.legend(legend);
  return chart.finish();
}

std::string draw_spectrum(const SpectrumFigure& f, ImageFormat format, FigureSize size) {
  Chart chart(format, size);
  chart.reserve_right(f.noise_floor > 0 ? 150 : 110);
  // Signed log axis: s is the smallest magnitude shown (a decade below the smallest
  // non-zero |eigenvalue|, at least 1e-9 of the largest), so every bar has a length.
  double largest = 0, smallest = INFINITY;
  for (double v : f.eigenvalues)
    if (std::isfinite(v) && v != 0) {
      largest = std::max(largest, std::abs(v));
      smallest = std::min(smallest, std::abs(v));
    }
  if (!(largest > 0)) largest = smallest = 1;
  const double s = std::max(smallest / 10, largest * 1e-9);
  auto t = [s](double v) { return std::copysign(std::log10(1 + std::abs(v) / s), v); };
  std::vector<double> ys{0};
  for (double v : f.eigenvalues) ys.push_back(t(v));
  if (f.noise_floor > 0) ys.insert(ys.end(), {t(f.noise_floor), t(-f.noise_floor)});
  const double n = double(f.eigenvalues.size());
  chart.set_ranges({0.3, n + 0.7}, detail::padded(detail::range_of(ys), 0.05), false);
  // Axes by hand: ticks at powers of ten of the signed scale.
  chart.axes("eigenvalue rank (as computed, descending)", "", true, false);
  const auto& box = chart.plot();
  cairo_t* cr = chart.cr();
  const Range yr = detail::range_of(ys);
  std::vector<double> labelled{chart.py(0)};  // label rows taken, so labels never overlap
  chart.set_colour({0.2, 0.2, 0.2});
  chart.text(box.x - 8, chart.py(0), "0", 1, 0.5, 11);
  for (int sign : {1, -1})
    for (double p = std::ceil(std::log10(s)); p <= std::log10(largest) + 1e-9; p += 1) {
      const double v = sign * std::pow(10.0, p);
      const double y = chart.py(t(v));
      if (t(v) < yr.lo - 1e-9 || t(v) > yr.hi + 1e-9) continue;
      if (std::any_of(labelled.begin(), labelled.end(),
                      [y](double taken) { return std::abs(taken - y) < 14; }))
        continue;
      labelled.push_back(y);
      chart.set_colour({0.2, 0.2, 0.2});
      cairo_move_to(cr, box.x - 5, y);
      cairo_line_to(cr, box.x, y);
      cairo_stroke(cr);
      chart.text(box.x - 8, y, fmt::format("{:g}", v), 1, 0.5, 11);
    }
  chart.set_colour({0, 0, 0});
  chart.text(14, box.y + box.h / 2, "eigenvalue (signed log scale)", 0.5, 0, Chart::font_size,
             false, -M_PI / 2);
  const double bar = std::min(24.0, 0.7 * box.w / std::max(1.0, n));
  for (std::size_t i = 0; i < f.eigenvalues.size(); ++i) {
    const double v = f.eigenvalues[i];
    if (!std::isfinite(v)) continue;
    chart.set_colour(v < 0 ? vermillion : blue);
    const double x = chart.px(double(i + 1)), y0 = chart.py(0), y1 = chart.py(t(v));
    cairo_rectangle(cr, x - bar / 2, std::min(y0, y1), bar, std::max(1.0, std::abs(y1 - y0)));
    cairo_fill(cr);
  }
  chart.set_colour({0.2, 0.2, 0.2});
  cairo_set_line_width(cr, 1);
  cairo_move_to(cr, box.x, chart.py(0));
  cairo_line_to(cr, box.x + box.w, chart.py(0));
  cairo_stroke(cr);
  std::vector<LegendEntry> legend{{"positive", blue, LegendEntry::Mark::box},
                                  {"negative", vermillion, LegendEntry::Mark::box}};
  if (f.noise_floor > 0) {
    const double dash[] = {6, 4};
    cairo_set_dash(cr, dash, 2, 0);
    chart.set_colour({0.3, 0.3, 0.3});
    for (double v : {f.noise_floor, -f.noise_floor}) {
      cairo_move_to(cr, box.x, chart.py(t(v)));
      cairo_line_to(cr, box.x + box.w, chart.py(t(v)));
    }
    cairo_stroke(cr);
    cairo_set_dash(cr, nullptr, 0, 0);
    legend.push_back({"+- noise floor", {0.3, 0.3, 0.3}, LegendEntry::Mark::dashed});
  }
  chart.legend(legend);
  chart.title(f.title, f.subtitle);
  return chart.finish();
}

}  // namespace unfurl::io::plot
