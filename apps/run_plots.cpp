#include "apps/run_plots.hpp"

#include <fmt/core.h>

#include <algorithm>

#include "io/plot/map_figures.hpp"
#include "io/plot/report_page.hpp"

namespace unfurl::app {
namespace {

using nlohmann::json;
namespace plot = io::plot;

// A JSON value as one table cell: numbers as printed by fmt, short arrays joined, long ones
// counted.
std::string cell(const json& v) {
  if (v.is_string()) return v.get<std::string>();
  if (v.is_number_float()) return fmt::format("{:.6g}", v.get<double>());
  if (v.is_array()) {
    if (v.size() > 12) return fmt::format("({} values)", v.size());
    std::string out;
    for (const auto& e : v) out += (out.empty() ? "" : ", ") + cell(e);
    return "[" + out + "]";
  }
  return v.dump();
}

// Every leaf of `v` as "a.b.c", value rows; "warnings" are left to the warnings list.
void flatten(const json& v, const std::string& prefix,
             std::vector<std::pair<std::string, std::string>>& rows) {
  if (!v.is_object()) {
    rows.emplace_back(prefix, cell(v));
    return;
  }
  for (const auto& [key, value] : v.items())
    if (key != "warnings") flatten(value, prefix.empty() ? key : prefix + "." + key, rows);
}

void gather_warnings(const json& v, const std::string& where, std::vector<std::string>& out) {
  if (v.is_object()) {
    for (const auto& [key, value] : v.items()) {
      if (key == "warnings" && value.is_array()) {
        for (const auto& w : value)
          if (w.is_string())
            out.push_back((where.empty() ? "" : where + ": ") + w.get<std::string>());
      } else {
        gather_warnings(value, key, out);
      }
    }
  } else if (v.is_array()) {
    for (const auto& e : v) gather_warnings(e, where, out);
  }
}

std::string interval_text(double value, double low, double high) {
  if (!std::isfinite(low) || !std::isfinite(high)) return fmt::format("{:.4f}", value);
  return fmt::format("{:.4f}  (95% interval {:.4f} to {:.4f})", value, low, high);
}

plot::ReportTable scores_table(const plot::PlotMap& m) {
  plot::ReportTable t{"Scores", {}};
  for (const auto& s : m.scores) {
    const std::string how =
        s.method == "sampled" ? fmt::format(", sampled: {} points", s.sample_size) : ", exact";
    t.rows.emplace_back(fmt::format("trustworthiness T(k = {}){}", s.k, how),
                        interval_text(s.t, s.t_low, s.t_high));
    t.rows.emplace_back(fmt::format("continuity C(k = {}){}", s.k, how),
                        interval_text(s.c, s.c_low, s.c_high));
  }
  for (std::size_t d = 0; d < m.residual_variance.size(); ++d)
    t.rows.emplace_back(fmt::format("residual variance, {} dimension{}", d + 1, d ? "s" : ""),
                        fmt::format("{:.4f}", m.residual_variance[d]));
  if (t.rows.empty()) t.rows.emplace_back("scores", "not computed in this run");
  return t;
}

}  // namespace

RunPlots add_run_plots(io::OutputSet& outputs, const std::filesystem::path& folder, bool with_terms,
                       const std::string& label) {
  RunPlots p;
  p.folder = folder;
  p.map = outputs.add(folder / "map.png", label);
  if (with_terms) p.map_by_terms = outputs.add(folder / "map_trustworthiness.png", label);
  p.residual = outputs.add(folder / "residual_variance.png", label);
  p.scores = outputs.add(folder / "scores.png", label);
  p.spectrum = outputs.add(folder / "spectrum.png", label);
  p.report = outputs.add(folder / "report.html", label);
  return p;
}

void write_run_plots(io::OutputSet& outputs, const RunPlots& plots, io::MapContents contents,
                     const std::string& map_name, const nlohmann::json& report) {
  const plot::PlotMap m = plot::plot_map_from(std::move(contents), map_name);
  const plot::FigureSize curve_size{860, 520};
  const plot::FigureSize map_size =
      m.coords.cols >= 2 ? plot::fitted_map_size(plot::map_figure(m, {})) : curve_size;
  plot::ReportPage page;
  page.title = "unfurl map " + map_name;
  page.created = m.attributes.value("creation_time", "");
  gather_warnings(report, "", page.warnings);

  auto emit = [&](std::size_t output, const std::string& caption, std::string png,
                  plot::FigureSize size) {
    outputs.write_text(output, png);
    page.figures.push_back({caption, std::move(png), size.width, size.height});
  };
  // A one-axis map has no picture of its own here: its figure says so.
  auto map_png = [&](plot::PointColours colours) {
    if (m.coords.cols >= 2)
      return plot::draw_map(plot::map_figure(m, std::move(colours)), plot::ImageFormat::png,
                            map_size);
    plot::CurveFigure one_axis;
    one_axis.title = "Map " + map_name + " has one axis";
    one_axis.empty_note = "a one-axis map: see its coordinates (--csv)";
    return plot::draw_curves(one_axis, plot::ImageFormat::png, map_size);
  };
  emit(plots.map, "The map's first two axes, coloured by point density (map.png)", map_png({}),
       map_size);
  if (plots.map_by_terms) {
    const bool with_terms = std::any_of(m.scores.begin(), m.scores.end(),
                                        [](const auto& s) { return !s.t_terms.empty(); });
    emit(*plots.map_by_terms,
         "Each scored point coloured by its term of 1 - T: bright points have map neighbours "
         "that are far apart in the input (map_trustworthiness.png)",
         map_png(with_terms ? plot::term_colours(m, plot::TermColour::trustworthiness)
                            : plot::PointColours{}),
         map_size);
  }
  emit(plots.residual, "Residual variance against dimensions (residual_variance.png)",
       plot::draw_curves(plot::residual_figure(m), plot::ImageFormat::png, curve_size), curve_size);
  emit(plots.scores, "Trustworthiness and continuity with their 95% intervals (scores.png)",
       plot::draw_curves(plot::scores_figure(m), plot::ImageFormat::png, curve_size), curve_size);
  emit(plots.spectrum, "Eigenvalue spectrum, negative part included (spectrum.png)",
       plot::draw_spectrum(plot::spectrum_figure(m), plot::ImageFormat::png, curve_size),
       curve_size);

  page.tables.push_back(scores_table(m));
  for (const char* key : {"input", "parameters", "embedding", "quality"}) {
    if (!report.contains(key)) continue;
    plot::ReportTable t{key, {}};
    t.heading[0] = static_cast<char>(std::toupper(static_cast<unsigned char>(t.heading[0])));
    flatten(report[key], "", t.rows);
    page.tables.push_back(std::move(t));
  }
  outputs.write_text(plots.report, plot::report_html(page));
}

}  // namespace unfurl::app
