#include "io/plot/detail/chart.hpp"

#include <cairo-svg.h>
#include <fmt/core.h>

#include <algorithm>
#include <cmath>

#include "engine/error.hpp"

namespace unfurl::io::plot::detail {
namespace {

constexpr double margin_left = 86, margin_bottom = 58, margin_top = 64, margin_right = 24;
static_assert(Chart::frame_width == margin_left + margin_right &&
              Chart::frame_height == margin_top + margin_bottom);

cairo_status_t append_bytes(void* closure, const unsigned char* data, unsigned int length) {
  static_cast<std::string*>(closure)->append(reinterpret_cast<const char*>(data), length);
  return CAIRO_STATUS_SUCCESS;
}

double nice_number(double x, bool round) {
  const double exponent = std::floor(std::log10(x));
  const double f = x / std::pow(10.0, exponent);
  double nf;
  if (round)
    nf = f < 1.5 ? 1 : f < 3 ? 2 : f < 7 ? 5 : 10;
  else
    nf = f <= 1 ? 1 : f <= 2 ? 2 : f <= 5 ? 5 : 10;
  return nf * std::pow(10.0, exponent);
}

}  // namespace

Range range_of(const std::vector<double>& values) {
  Range r{INFINITY, -INFINITY};
  for (double v : values)
    if (std::isfinite(v)) r = {std::min(r.lo, v), std::max(r.hi, v)};
  if (!(r.lo <= r.hi)) return {0, 1};
  return r;
}

Range padded(Range r, double fraction) {
  const double w = r.hi - r.lo;
  if (!(w > 0)) {
    const double half = std::max(0.5, std::abs(r.lo) * 0.05);
    return {r.lo - half, r.hi + half};
  }
  return {r.lo - fraction * w, r.hi + fraction * w};
}

std::vector<double> ticks_at(Range r, double step) {
  std::vector<double> ticks;
  const double first = std::ceil(r.lo / step - 1e-9);
  for (double i = 0;; i += 1) {
    const double t = (first + i) * step;
    if (t > r.hi + step * 1e-9 || i > 1000) break;
    ticks.push_back(std::abs(t) < step * 1e-9 ? 0.0 : t);
  }
  return ticks;
}

std::vector<double> nice_ticks(Range r, int target, double* step_out) {
  // A short axis can fall between the ticks of the nice step: ask for more until three fit.
  std::vector<double> ticks;
  double step = 0;
  for (int t = std::max(2, target); t <= target + 12 && ticks.size() < 3; ++t) {
    step = nice_number(nice_number(r.hi - r.lo, false) / (t - 1), true);
    ticks = ticks_at(r, step);
  }
  if (step_out) *step_out = step;
  return ticks;
}

std::string tick_label(double value, double step) {
  if (value == 0) value = 0.0;  // a tick at -0 reads "0", not "-0"
  const double magnitude = std::max(std::abs(value), step);
  if (magnitude >= 1e6 || magnitude < 1e-3) {
    // Enough significant digits that neighbouring ticks read differently.
    const int digits = std::max(3, static_cast<int>(std::ceil(std::log10(magnitude / step))) + 1);
    return fmt::format("{:.{}g}", value, std::min(digits, 17));
  }
  const int decimals = std::max(0, -static_cast<int>(std::floor(std::log10(step) + 1e-9)));
  return fmt::format("{:.{}f}", value, decimals);
}

std::vector<double> log_ticks(Range r) {
  const bool fine = r.hi - r.lo < 2;
  std::vector<double> ticks;
  for (double p = std::floor(r.lo); p <= std::ceil(r.hi); p += 1)
    for (double m : {1.0, 2.0, 5.0}) {
      const double t = p + std::log10(m);
      if ((m == 1 || fine) && t >= r.lo - 1e-9 && t <= r.hi + 1e-9) ticks.push_back(t);
    }
  if (ticks.size() >= 3) return ticks;
  // Less than a factor of about 2.5 from end to end: nice steps of the values.
  ticks.clear();
  for (double v : nice_ticks({std::pow(10.0, r.lo), std::pow(10.0, r.hi)}, 5))
    if (v > 0) ticks.push_back(std::log10(v));
  return ticks;
}

std::vector<std::string> log_tick_labels(std::span<const double> ticks) {
  struct Parts {
    double value, mantissa;
    int decade;
    bool round;  // a whole mantissa: 1, 2 or 5 times a power of ten
  };
  std::vector<Parts> parts;
  bool powers = false;  // some tick reads well only as a power of ten
  for (double t : ticks) {
    Parts p{std::pow(10.0, t), 0, static_cast<int>(std::floor(t + 1e-9)), false};
    p.mantissa = p.value / std::pow(10.0, p.decade);
    p.round = std::abs(p.mantissa - std::round(p.mantissa)) < 1e-6;
    powers = powers || (p.round && (p.decade >= 6 || p.decade < -3));
    parts.push_back(p);
  }
  std::vector<std::string> labels;
  for (const Parts& p : parts) {
    if (p.round && powers)
      labels.push_back(fmt::format("{}e{}", std::lround(p.mantissa), p.decade));
    else if (p.value >= 1 && std::abs(p.value - std::round(p.value)) < 1e-6 * p.value &&
             p.value < 1e15)
      labels.push_back(count_text(static_cast<std::size_t>(std::llround(p.value))));
    else
      labels.push_back(fmt::format("{:.6g}", p.value));
  }
  return labels;
}

std::string count_text(std::size_t n) {
  const std::string digits = std::to_string(n);
  std::string out;
  for (std::size_t i = 0; i < digits.size(); ++i) {
    if (i > 0 && (digits.size() - i) % 3 == 0) out += ',';
    out += digits[i];
  }
  return out;
}

Chart::Chart(ImageFormat format, FigureSize size) : format_(format), size_(size) {
  size.validate();
  if (format == ImageFormat::svg)
    surface_ =
        cairo_svg_surface_create_for_stream(append_bytes, &svg_bytes_, size.width, size.height);
  else
    surface_ = cairo_image_surface_create(CAIRO_FORMAT_RGB24, size.width, size.height);
  cr_ = cairo_create(surface_);
  if (cairo_status(cr_) != CAIRO_STATUS_SUCCESS)
    throw ResourceError(std::string("cannot create a figure: ") +
                        cairo_status_to_string(cairo_status(cr_)));
  cairo_set_source_rgb(cr_, 1, 1, 1);
  cairo_paint(cr_);
  cairo_select_font_face(cr_, "DejaVu Sans", CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_NORMAL);
  reserve_right(0);
}

Chart::~Chart() {
  if (cr_) cairo_destroy(cr_);
  if (surface_) cairo_surface_destroy(surface_);
}

void Chart::reserve_right(double pixels) {
  right_ = pixels;
  plot_ = {margin_left, margin_top, size_.width - margin_left - margin_right - pixels,
           size_.height - margin_top - margin_bottom};
}

void Chart::set_ranges(Range x, Range y, bool equal_aspect) {
  x_ = x;
  y_ = y;
  equal_aspect_ = equal_aspect;
  if (!equal_aspect) return;
  const double scale = std::min(plot_.w / (x.hi - x.lo), plot_.h / (y.hi - y.lo));
  const double w = scale * (x.hi - x.lo), h = scale * (y.hi - y.lo);
  plot_.x += (plot_.w - w) / 2;
  plot_.y += (plot_.h - h) / 2;
  plot_.w = w;
  plot_.h = h;
}

double Chart::px(double x) const {
  return plot_.x + (x - x_.lo) / (x_.hi - x_.lo) * plot_.w;
}
double Chart::py(double y) const {
  return plot_.y + plot_.h - (y - y_.lo) / (y_.hi - y_.lo) * plot_.h;
}

void Chart::set_colour(Rgb c, double alpha) {
  cairo_set_source_rgba(cr_, c.r, c.g, c.b, alpha);
}

void Chart::text(double x, double y, const std::string& s, double h_align, double v_align,
                 double size, bool bold, double angle) {
  cairo_save(cr_);
  cairo_select_font_face(cr_, "DejaVu Sans", CAIRO_FONT_SLANT_NORMAL,
                         bold ? CAIRO_FONT_WEIGHT_BOLD : CAIRO_FONT_WEIGHT_NORMAL);
  cairo_set_font_size(cr_, size);
  cairo_text_extents_t e;
  cairo_text_extents(cr_, s.c_str(), &e);
  cairo_font_extents_t fe;
  cairo_font_extents(cr_, &fe);
  cairo_translate(cr_, x, y);
  cairo_rotate(cr_, angle);
  // Vertical alignment by the font's ascent and descent, so labels of one row line up.
  cairo_move_to(cr_, -h_align * e.x_advance, fe.ascent - v_align * (fe.ascent + fe.descent));
  cairo_show_text(cr_, s.c_str());
  cairo_restore(cr_);
}

double Chart::text_width(const std::vector<std::string>& texts) {
  cairo_save(cr_);
  cairo_set_font_size(cr_, font_size);
  double w = 0;
  for (const auto& s : texts) {
    cairo_text_extents_t e;
    cairo_text_extents(cr_, s.c_str(), &e);
    w = std::max(w, e.x_advance);
  }
  cairo_restore(cr_);
  return w;
}

void Chart::title(const std::string& title, const std::string& subtitle) {
  // Long lines on a narrow figure shrink rather than run off its edges.
  auto fitting = [&](const std::string& s, double size) {
    const double w = text_width({s}) * size / font_size;
    return w > size_.width - 16 ? size * (size_.width - 16) / w : size;
  };
  set_colour({0, 0, 0});
  text(size_.width / 2.0, 10, title, 0.5, 0, fitting(title, 16), true);
  set_colour({0.3, 0.3, 0.3});
  if (!subtitle.empty()) text(size_.width / 2.0, 34, subtitle, 0.5, 0, fitting(subtitle, 12));
}

void Chart::axes(const std::string& x_label, const std::string& y_label, bool integer_x,
                 bool y_ticks, bool log_x, bool log_y) {
  double x_step = 0, y_step = 0;
  std::vector<double> xt = nice_ticks(x_, std::max(3, int(plot_.w / 90)), &x_step);
  if (integer_x && x_step < 1) {
    xt.clear();
    x_step = 1;
    for (double t = std::ceil(x_.lo); t <= x_.hi; t += 1) xt.push_back(t);
  }
  std::vector<double> yt = nice_ticks(y_, std::max(3, int(plot_.h / 60)), &y_step);
  if (equal_aspect_ && x_step != y_step) {
    // One data unit is one length on both axes: so is one tick step.
    x_step = y_step = std::min(x_step, y_step);
    xt = ticks_at(x_, x_step);
    yt = ticks_at(y_, y_step);
  }
  if (log_x) xt = log_ticks(x_);
  if (log_y) yt = log_ticks(y_);
  if (!y_ticks) yt.clear();
  const auto labels_of = [](const std::vector<double>& ticks, bool log, double step) {
    if (log) return log_tick_labels(ticks);
    std::vector<std::string> labels;
    for (double t : ticks) labels.push_back(tick_label(t, step));
    return labels;
  };
  const std::vector<std::string> x_labels = labels_of(xt, log_x, x_step);
  const std::vector<std::string> y_labels = labels_of(yt, log_y, y_step);
  cairo_set_line_width(cr_, 1);
  set_colour({0.9, 0.9, 0.9});
  for (double t : xt) {
    cairo_move_to(cr_, std::round(px(t)) + 0.5, plot_.y);
    cairo_line_to(cr_, std::round(px(t)) + 0.5, plot_.y + plot_.h);
  }
  for (double t : yt) {
    cairo_move_to(cr_, plot_.x, std::round(py(t)) + 0.5);
    cairo_line_to(cr_, plot_.x + plot_.w, std::round(py(t)) + 0.5);
  }
  cairo_stroke(cr_);
  set_colour({0.2, 0.2, 0.2});
  cairo_rectangle(cr_, plot_.x - 0.5, plot_.y - 0.5, plot_.w + 1, plot_.h + 1);
  cairo_stroke(cr_);
  for (std::size_t i = 0; i < xt.size(); ++i) {
    cairo_move_to(cr_, std::round(px(xt[i])) + 0.5, plot_.y + plot_.h);
    cairo_line_to(cr_, std::round(px(xt[i])) + 0.5, plot_.y + plot_.h + 5);
    text(px(xt[i]), plot_.y + plot_.h + 8, x_labels[i], 0.5, 0, 12);
  }
  for (std::size_t i = 0; i < yt.size(); ++i) {
    cairo_move_to(cr_, plot_.x - 5, std::round(py(yt[i])) + 0.5);
    cairo_line_to(cr_, plot_.x, std::round(py(yt[i])) + 0.5);
    text(plot_.x - 8, py(yt[i]), y_labels[i], 1, 0.5, 12);
  }
  cairo_stroke(cr_);
  set_colour({0, 0, 0});
  text(plot_.x + plot_.w / 2, plot_.y + plot_.h + 30, x_label, 0.5, 0, font_size);
  text(14, plot_.y + plot_.h / 2, y_label, 0.5, 0, font_size, false, -M_PI / 2);
}

void Chart::legend(const std::vector<LegendEntry>& entries) {
  double y = plot_.y + 6;
  const double x = size_.width - margin_right - right_ + 16;
  for (const auto& e : entries) {
    set_colour(e.colour);
    if (e.mark == LegendEntry::Mark::box) {
      cairo_rectangle(cr_, x, y + 2, 18, 12);
      cairo_fill(cr_);
    } else {
      cairo_set_line_width(cr_, 2.5);
      if (e.mark == LegendEntry::Mark::dashed) {
        const double dash[] = {5, 3};
        cairo_set_dash(cr_, dash, 2, 0);
      }
      cairo_move_to(cr_, x, y + 8);
      cairo_line_to(cr_, x + 18, y + 8);
      cairo_stroke(cr_);
      cairo_set_dash(cr_, nullptr, 0, 0);
    }
    set_colour({0, 0, 0});
    text(x + 26, y + 8, e.text, 0, 0.5, font_size);
    y += 22;
  }
}

void Chart::colour_bar(Range values, const std::string& label, bool log_scale) {
  const double x = size_.width - margin_right - right_ + 20, w = 18;
  const double top = plot_.y + 10, h = std::min(plot_.h - 20, 360.0);
  for (int i = 0; i < int(h); ++i) {
    set_colour(viridis(1.0 - i / h));
    cairo_rectangle(cr_, x, top + i, w, 1.5);
    cairo_fill(cr_);
  }
  set_colour({0.2, 0.2, 0.2});
  cairo_set_line_width(cr_, 1);
  cairo_rectangle(cr_, x - 0.5, top - 0.5, w + 1, h + 1);
  cairo_stroke(cr_);
  // Ticks in value space; a log bar shows whole powers of ten and the extremes.
  std::vector<std::pair<double, std::string>> ticks;
  if (log_scale) {
    const double lo = std::log10(values.lo), hi = std::log10(values.hi);
    for (double p = std::ceil(lo); p <= hi + 1e-9; p += 1)
      ticks.push_back({(p - lo) / (hi - lo), fmt::format("{:g}", std::pow(10.0, p))});
    if (ticks.empty() || ticks.back().first < 0.9)
      ticks.push_back({1, fmt::format("{:g}", values.hi)});
  } else {
    double step = 0;
    for (double t : nice_ticks(values, 6, &step))
      ticks.push_back({(t - values.lo) / (values.hi - values.lo), tick_label(t, step)});
  }
  std::vector<std::string> labels;
  for (const auto& tick : ticks) labels.push_back(tick.second);
  const double label_x = x + w + 7 + text_width(labels) + 8;
  for (const auto& [f, s] : ticks) {
    const double y = top + h - f * h;
    set_colour({0.2, 0.2, 0.2});
    cairo_move_to(cr_, x + w, y);
    cairo_line_to(cr_, x + w + 4, y);
    cairo_stroke(cr_);
    text(x + w + 7, y, s, 0, 0.5, 12);
  }
  set_colour({0, 0, 0});
  text(label_x, top + h / 2, label, 0.5, 0, font_size, false, -M_PI / 2);
}

std::string Chart::finish() {
  std::string bytes;
  cairo_surface_flush(surface_);
  if (format_ == ImageFormat::png) {
    if (cairo_surface_write_to_png_stream(surface_, append_bytes, &bytes) != CAIRO_STATUS_SUCCESS)
      throw ResourceError("cannot encode the figure as PNG");
  }
  cairo_destroy(cr_);
  cr_ = nullptr;
  cairo_surface_finish(surface_);
  const cairo_status_t status = cairo_surface_status(surface_);
  if (status != CAIRO_STATUS_SUCCESS)
    throw ResourceError(std::string("cannot draw the figure: ") + cairo_status_to_string(status));
  return format_ == ImageFormat::svg ? std::move(svg_bytes_) : bytes;
}

}  // namespace unfurl::io::plot::detail
