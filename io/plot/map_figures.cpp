#include "io/plot/map_figures.hpp"

#include <fmt/core.h>

#include <algorithm>
#include <cmath>

#include "engine/error.hpp"
#include "io/plot/detail/chart.hpp"

namespace unfurl::io::plot {
PlotMap plot_map_from(io::MapContents c, std::string name) {
  PlotMap m;
  m.name = std::move(name);
  m.coords = std::move(c.coords);
  m.rows = std::move(c.rows);
  m.spectrum = std::move(c.spectrum);
  m.spectrum_attributes = std::move(c.spectrum_attributes);
  m.attributes = std::move(c.attributes);
  if (c.quality.residual) m.residual_variance = std::move(c.quality.residual->by_dims);
  m.graph = std::move(c.graph);
  for (io::MapScoreRecord& s : c.quality.by_k) {
    StoredScores stored;
    stored.k = static_cast<std::size_t>(s.k);
    stored.t = s.trustworthiness;
    stored.t_low = s.trustworthiness_95[0];
    stored.t_high = s.trustworthiness_95[1];
    stored.c = s.continuity;
    stored.c_low = s.continuity_95[0];
    stored.c_high = s.continuity_95[1];
    stored.method = std::move(s.method);
    stored.sample_size = static_cast<std::size_t>(s.sample_size);
    stored.scored_rows = std::move(s.scored_rows);
    stored.t_terms = std::move(s.trustworthiness_terms);
    stored.c_terms = std::move(s.continuity_terms);
    m.scores.push_back(std::move(stored));
  }
  std::sort(m.scores.begin(), m.scores.end(),
            [](const StoredScores& a, const StoredScores& b) { return a.k < b.k; });
  return m;
}

PlotMap read_plot_map(const std::filesystem::path& path) {
  return plot_map_from(io::read_map(path), path.filename().string());
}

PointColours term_colours(const PlotMap& map, TermColour which) {
  const char* name = which == TermColour::trustworthiness ? "trustworthiness" : "continuity";
  for (const StoredScores& s : map.scores) {
    const std::vector<double>& terms = which == TermColour::trustworthiness ? s.t_terms : s.c_terms;
    if (terms.empty() || terms.size() != s.scored_rows.size()) continue;
    PointColours out;
    out.values.assign(map.coords.rows, NAN);
    for (std::size_t i = 0; i < terms.size(); ++i) {
      const std::int64_t r = s.scored_rows[i];
      if (r >= 0 && static_cast<std::size_t>(r) < map.coords.rows)
        out.values[static_cast<std::size_t>(r)] = terms[i];
    }
    out.label = fmt::format("term of 1 - {}(k = {})",
                            which == TermColour::trustworthiness ? "T" : "C", s.k);
    out.allow_categories = false;
    return out;
  }
  throw DataError(fmt::format("{}: the map stores no per-point {} terms (made with --no-score?)",
                              map.name, name));
}

MapFigure map_figure(const PlotMap& map, PointColours colours, std::size_t axis_x,
                     std::size_t axis_y) {
  MapFigure f;
  f.coords = &map.coords;
  f.axis_x = axis_x;
  f.axis_y = axis_y;
  f.title = fmt::format("Map {} ({} points, {} axes)", map.name,
                        detail::count_text(map.coords.rows), map.coords.cols);
  f.subtitle =
      colours.values.empty() ? "coloured by point density" : "coloured by " + colours.label;
  f.colours = std::move(colours);
  return f;
}

CurveFigure residual_figure(const PlotMap& map) {
  CurveFigure f;
  f.title = "Residual variance against map dimensions";
  f.subtitle =
      // The map says which distances were compared (geodesic, or input-space ones for a
      // linear map), so the subtitle names neither.
      fmt::format(
          "{}: 1 - R^2 of the distances the map should keep and the map's own, using "
          "the first d axes",
          map.name);
  f.x_label = "dimensions d";
  f.y_label = "residual variance";
  f.integer_x = true;
  f.y_include = {0};
  f.empty_note = "no residual variance stored (a run without scores)";
  if (!map.residual_variance.empty()) {
    Series s;
    s.name = map.name;
    for (std::size_t d = 0; d < map.residual_variance.size(); ++d) {
      s.x.push_back(double(d + 1));
      s.y.push_back(map.residual_variance[d]);
    }
    f.series.push_back(std::move(s));
  }
  return f;
}

CurveFigure scores_figure(const PlotMap& map) {
  CurveFigure f;
  f.title = "Trustworthiness and continuity against the score neighbourhood k";
  f.subtitle = map.name + ": with 95% intervals";
  if (!map.scores.empty() && map.scores.front().method == "sampled")
    f.subtitle += fmt::format(" (sampled, {} points)", map.scores.front().sample_size);
  else if (!map.scores.empty())
    f.subtitle += " (exact: every point scored, so the intervals have no width)";
  f.y_include = {1};
  f.x_label = "score neighbourhood size k";
  f.y_label = "score (1 is perfect)";
  f.integer_x = true;
  f.empty_note = "no trustworthiness or continuity stored (no scores, or a given graph)";
  Series t{"trustworthiness T", {}, {}, {}, {}}, c{"continuity C", {}, {}, {}, {}};
  for (const StoredScores& s : map.scores) {
    t.x.push_back(double(s.k));
    t.y.push_back(s.t);
    t.low.push_back(s.t_low);
    t.high.push_back(s.t_high);
    c.x.push_back(double(s.k));
    c.y.push_back(s.c);
    c.low.push_back(s.c_low);
    c.high.push_back(s.c_high);
  }
  if (!map.scores.empty()) f.series = {std::move(t), std::move(c)};
  return f;
}

SpectrumFigure spectrum_figure(const PlotMap& map) {
  SpectrumFigure f;
  f.eigenvalues = map.spectrum;
  f.noise_floor = map.spectrum_attributes.value("noise_floor", 0.0);
  f.title = "Eigenvalues of the double-centred squared geodesics B";
  const auto& a = map.spectrum_attributes;
  f.subtitle = fmt::format("{}: {} of {} computed", map.name, map.spectrum.size(),
                           a.value("order", std::size_t{map.spectrum.size()}));
  if (a.contains("negative_ratio") && a["negative_ratio"].is_number())
    f.subtitle += fmt::format("; non-Euclidean ratio {:.3g} ({})",
                              a["negative_ratio"].get<double>(), a.value("mass_method", "?"));
  return f;
}

}  // namespace unfurl::io::plot
