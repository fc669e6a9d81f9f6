#include "apps/sweep_outputs.hpp"

#include <fmt/core.h>

#include <cmath>
#include <ctime>

#include "apps/report.hpp"
#include "io/plot/figures.hpp"
#include "io/plot/report_page.hpp"

namespace unfurl::app {
namespace {

using nlohmann::json;
namespace plot = io::plot;

// The rows shown: every setting, then PCA.
std::vector<const SweepRow*> all_rows(const SweepResult& r) {
  std::vector<const SweepRow*> out;
  for (const SweepRow& row : r.rows) out.push_back(&row);
  if (r.linear) out.push_back(&*r.linear);
  return out;
}

std::string label_of(const SweepRow& row) {
  return row.linear ? std::string("PCA") : setting_name(row.setting);
}

std::string fixed(double v, int digits) {
  return std::isfinite(v) ? fmt::format("{:.{}f}", v, digits) : std::string("-");
}

std::string suspects_text(const SweepRow& row) {
  if (row.linear || !row.embedded) return "-";
  return row.suspects ? std::to_string(*row.suspects) : std::string("n/c");
}

std::string csv_field(const std::string& text) {
  if (text.find_first_of(",\"\n") == std::string::npos) return text;
  std::string out = "\"";
  for (char c : text) out += c == '"' ? std::string("\"\"") : std::string(1, c);
  return out + "\"";
}

std::string csv_number(double v) {
  return std::isfinite(v) ? fmt::format("{:.9g}", v) : std::string();
}

std::string joined(const std::vector<std::string>& parts, const char* between) {
  std::string out;
  for (const auto& p : parts) out += (out.empty() ? "" : between) + p;
  return out;
}

json number_or_null(double v) {
  return std::isfinite(v) ? json(v) : json(nullptr);
}

json row_json(const SweepRow& row, const SweepOptions& o) {
  json residual = json::object();
  for (std::size_t d = o.dims_low; d <= o.dims_high && d <= row.residual.size(); ++d)
    residual[std::to_string(d)] = {{"value", number_or_null(row.residual[d - 1])},
                                   {"standard_error", number_or_null(row.residual_error[d - 1])}};
  const NeighbourhoodScore& s = row.score;
  json j = {{"setting", row.linear ? json("pca") : json(setting_name(row.setting))},
            {"embedded", row.embedded},
            {"skipped", row.skipped},
            {"map_points", row.map_points},
            {"residual_variance", residual},
            {"residual_basis", row.residual_basis},
            {"trustworthiness",
             {{"value", number_or_null(s.trustworthiness)},
              {"interval_95", {number_or_null(s.t_low), number_or_null(s.t_high)}}}},
            {"continuity",
             {{"value", number_or_null(s.continuity)},
              {"interval_95", {number_or_null(s.c_low), number_or_null(s.c_high)}}}},
            {"knn_preservation",
             {{"value", number_or_null(s.knn_preservation)},
              {"interval_95", {number_or_null(s.knn_low), number_or_null(s.knn_high)}}}},
            {"score_method", s.sampled ? "sampled" : "exact"},
            {"score_sample", s.sample_size},
            {"seconds", row.seconds},
            {"warnings", row.warnings}};
  if (!row.linear) {
    j["rule"] = std::holds_alternative<WithinRadius>(row.setting) ? "radius" : "k";
    j["value"] = setting_value(row.setting);
    j["graph"] = {{"nodes", row.nodes},
                  {"edges", row.edges},
                  {"components", row.components},
                  {"largest_component", row.largest_component},
                  {"isolated_nodes", row.isolated_nodes}};
    j["dropped_points"] = row.dropped_points;
    j["landmarks"] = {{"count", row.landmarks}, {"shared", row.shared_landmarks}};
    j["negative_ratio"] = {{"value", number_or_null(row.negative_ratio)},
                           {"standard_error", number_or_null(row.negative_ratio_error)}};
    j["short_circuit_suspects"] = row.suspects ? json(*row.suspects) : json("not checked");
    j["worst_suspect_rows"] = row.suspect_rows;
    j["flags"] = row.flags;
  }
  return j;
}

std::string created_now() {
  const std::time_t now = std::time(nullptr);
  char text[32];
  std::strftime(text, sizeof text, "%Y-%m-%dT%H:%M:%SZ", std::gmtime(&now));
  return text;
}

plot::CurveFigure residual_curves(const SweepResult& r, const SweepOptions& o,
                                  const std::string& input_name) {
  plot::CurveFigure f;
  f.title = "Residual variance against dimensions, one curve per setting";
  f.subtitle = input_name +
               ": 1 - R^2 of graph geodesics and map distances (PCA: of input "
               "distances); an elbow suggests the dimension";
  f.x_label = "dimensions";
  f.y_label = "residual variance";
  f.integer_x = true;
  f.y_include = {0.0};
  f.empty_note = "no setting could be embedded";
  for (const SweepRow* row : all_rows(r)) {
    if (!row->embedded) continue;
    plot::Series s;
    s.name = label_of(*row);
    for (std::size_t d = o.dims_low; d <= o.dims_high; ++d) {
      s.x.push_back(static_cast<double>(d));
      s.y.push_back(d <= row->residual.size() ? row->residual[d - 1] : NAN);
    }
    f.series.push_back(std::move(s));
  }
  return f;
}

plot::CurveFigure score_curves(const SweepResult& r, const SweepOptions& o,
                               const std::string& input_name) {
  plot::CurveFigure f;
  const bool radius = std::holds_alternative<WithinRadius>(o.settings.front());
  const std::string k = std::to_string(r.score_k);
  f.title = "Trustworthiness T(" + k + ") and continuity C(" + k + ") against the setting";
  f.subtitle = input_name + ": with 95% intervals, on " + std::to_string(o.score_dims) + " axes";
  if (r.linear)
    f.subtitle += fmt::format("; PCA: T {} and C {}", fixed(r.linear->score.trustworthiness, 4),
                              fixed(r.linear->score.continuity, 4));
  f.x_label = radius ? "radius" : "k (neighbours per point)";
  f.y_label = "score";
  f.integer_x = !radius;
  f.y_include = {1.0};
  f.empty_note = "no setting could be scored";
  plot::Series t{"trustworthiness T", {}, {}, {}, {}}, c{"continuity C", {}, {}, {}, {}};
  for (const SweepRow& row : r.rows) {
    if (!row.embedded) continue;
    const double x = setting_value(row.setting);
    const NeighbourhoodScore& s = row.score;
    t.x.push_back(x), t.y.push_back(s.trustworthiness);
    t.low.push_back(s.t_low), t.high.push_back(s.t_high);
    c.x.push_back(x), c.y.push_back(s.continuity);
    c.low.push_back(s.c_low), c.high.push_back(s.c_high);
  }
  f.series = {std::move(t), std::move(c)};
  return f;
}

}  // namespace

std::string sweep_table(const SweepResult& r, const SweepOptions& o) {
  const std::string k = std::to_string(r.score_k);
  std::string head =
      fmt::format("{:<14} {:>5} {:>9} {:>7} {:>4}", "setting", "comp", "edges", "dropped", "land");
  for (std::size_t d = o.dims_low; d <= o.dims_high; ++d)
    head += fmt::format(" {:>6}", "rv" + std::to_string(d));
  head += fmt::format(" {:>7} {:>15} {:>7} {:>6} {:>6} {:>5}  {}", "T(" + k + ")", "T 95%",
                      "C(" + k + ")", "kNN", "neg", "susp", "note");
  std::string out = head + "\n";
  for (const SweepRow* row : all_rows(r)) {
    const NeighbourhoodScore& s = row->score;
    std::string line =
        fmt::format("{:<14} {:>5} {:>9} {:>7} {:>4}", label_of(*row),
                    row->linear ? "-" : std::to_string(row->components),
                    row->linear ? "-" : std::to_string(row->edges),
                    row->embedded ? std::to_string(row->dropped_points) : "-",
                    row->linear || !row->embedded
                        ? std::string("-")
                        : std::to_string(row->landmarks) + (row->shared_landmarks ? "" : "*"));
    for (std::size_t d = o.dims_low; d <= o.dims_high; ++d)
      line += fmt::format(" {:>6}", row->embedded && d <= row->residual.size()
                                        ? fixed(row->residual[d - 1], 4)
                                        : "-");
    const std::string interval = std::isfinite(s.t_low) && row->embedded
                                     ? fixed(s.t_low, 4) + "-" + fixed(s.t_high, 4)
                                     : std::string("-");
    std::vector<std::string> notes;
    if (!row->embedded) notes.push_back(row->skipped);
    if (row->linear) notes.push_back("linear baseline; rv of input distances");
    for (const auto& f : row->flags) notes.push_back(f);
    if (r.recommended && row == &r.rows[*r.recommended]) notes.insert(notes.begin(), "RECOMMENDED");
    line += fmt::format(" {:>7} {:>15} {:>7} {:>6} {:>6} {:>5}  {}",
                        row->embedded ? fixed(s.trustworthiness, 4) : "-", interval,
                        row->embedded ? fixed(s.continuity, 4) : "-",
                        row->embedded ? fixed(s.knn_preservation, 3) : "-",
                        row->embedded && !row->linear ? fixed(row->negative_ratio, 3) : "-",
                        suspects_text(*row), joined(notes, "; "));
    out += line + "\n";
  }
  return out;
}

std::string sweep_csv(const SweepResult& r, const SweepOptions& o) {
  std::string out =
      "rule,setting,embedded,skipped,components,largest_component,edges,isolated_nodes,"
      "map_points,dropped_points,landmarks,shared_landmarks";
  for (std::size_t d = o.dims_low; d <= o.dims_high; ++d) out += fmt::format(",rv_{}", d);
  for (std::size_t d = o.dims_low; d <= o.dims_high; ++d) out += fmt::format(",rv_{}_se", d);
  out +=
      ",score_k,t,t_low,t_high,c,c_low,c_high,knn,knn_low,knn_high,negative_ratio,"
      "negative_ratio_se,suspects,flags,recommended\n";
  for (const SweepRow* row : all_rows(r)) {
    const NeighbourhoodScore& s = row->score;
    const bool graph = !row->linear;
    std::vector<std::string> f = {
        graph ? (std::holds_alternative<WithinRadius>(row->setting) ? "radius" : "k") : "pca",
        graph ? csv_number(setting_value(row->setting)) : "",
        row->embedded ? "1" : "0",
        csv_field(row->skipped),
        graph ? std::to_string(row->components) : "",
        graph ? std::to_string(row->largest_component) : "",
        graph ? std::to_string(row->edges) : "",
        graph ? std::to_string(row->isolated_nodes) : "",
        std::to_string(row->map_points),
        std::to_string(row->dropped_points),
        graph && row->embedded ? std::to_string(row->landmarks) : "",
        graph && row->embedded ? (row->shared_landmarks ? "1" : "0") : ""};
    for (int pass = 0; pass < 2; ++pass)
      for (std::size_t d = o.dims_low; d <= o.dims_high; ++d) {
        const auto& v = pass == 0 ? row->residual : row->residual_error;
        f.push_back(row->embedded && d <= v.size() ? csv_number(v[d - 1]) : "");
      }
    const bool scored = row->embedded;
    f.push_back(std::to_string(r.score_k));
    for (double v : {s.trustworthiness, s.t_low, s.t_high, s.continuity, s.c_low, s.c_high,
                     s.knn_preservation, s.knn_low, s.knn_high})
      f.push_back(scored ? csv_number(v) : "");
    f.push_back(graph && scored ? csv_number(row->negative_ratio) : "");
    f.push_back(graph && scored ? csv_number(row->negative_ratio_error) : "");
    f.push_back(graph && row->suspects ? std::to_string(*row->suspects) : "");
    f.push_back(csv_field(joined(row->flags, "; ")));
    f.push_back(r.recommended && row == &r.rows[*r.recommended] ? "1" : "0");
    out += joined(f, ",") + "\n";
  }
  return out;
}

json sweep_json(const SweepResult& r, const SweepOptions& o) {
  json rows = json::array();
  for (const SweepRow& row : r.rows) rows.push_back(row_json(row, o));
  json recommended = nullptr;
  if (r.recommended)
    recommended = {{"setting", setting_name(r.rows[*r.recommended].setting)},
                   {"value", setting_value(r.rows[*r.recommended].setting)},
                   {"index", *r.recommended}};
  return {{"rows", rows},
          {"linear", r.linear ? row_json(*r.linear, o) : json(nullptr)},
          {"usable", r.usable},
          {"recommended", recommended},
          {"recommendation", r.recommendation},
          {"points", r.points},
          {"nodes", r.nodes},
          {"score_k", r.score_k},
          {"search_seconds", r.search_seconds},
          {"seconds", r.seconds},
          {"warnings", r.warnings}};
}

SweepFiles add_sweep_files(io::OutputSet& outputs, const std::filesystem::path& folder) {
  const std::string label = "--out-dir";
  SweepFiles f;
  f.csv = outputs.add(folder / "sweep.csv", label);
  f.json = outputs.add(folder / "sweep.json", label);
  f.residual = outputs.add(folder / "residual_variance.png", label);
  f.scores = outputs.add(folder / "scores.png", label);
  f.map = outputs.add(folder / "map.png", label);
  f.report = outputs.add(folder / "report.html", label);
  return f;
}

void write_sweep_files(io::OutputSet& outputs, const SweepFiles& files, const SweepResult& r,
                       const SweepOptions& o, const json& doc, const std::string& input_name) {
  outputs.write_text(files.csv, sweep_csv(r, o));
  write_json_file(outputs, files.json, doc);
  plot::ReportPage page;
  page.title = "unfurl sweep of " + input_name;
  page.created = created_now();
  const plot::FigureSize curve_size{860, 520};
  auto emit = [&](std::size_t output, const std::string& caption, std::string png,
                  plot::FigureSize size) {
    outputs.write_text(output, png);
    page.figures.push_back({caption, std::move(png), size.width, size.height});
  };
  emit(files.residual,
       "Residual variance against dimensions, one curve per setting "
       "(residual_variance.png)",
       plot::draw_curves(residual_curves(r, o, input_name), plot::ImageFormat::png, curve_size),
       curve_size);
  emit(files.scores, "Trustworthiness and continuity against the setting (scores.png)",
       plot::draw_curves(score_curves(r, o, input_name), plot::ImageFormat::png, curve_size),
       curve_size);
  const SweepRow* chosen = r.recommended ? &r.rows[*r.recommended] : nullptr;
  if (chosen && chosen->map.cols >= 2) {
    plot::MapFigure m;
    m.coords = &chosen->map;
    m.title = "Map of " + input_name + " at " + setting_name(chosen->setting) + " (" +
              fmt::format("{}", chosen->map_points) + " points)";
    m.subtitle = "the recommended setting; coloured by point density";
    const plot::FigureSize size = plot::fitted_map_size(m);
    emit(files.map, "The map at the recommended setting (map.png)",
         plot::draw_map(m, plot::ImageFormat::png, size), size);
  } else {
    plot::CurveFigure none;
    none.title = "No map drawn";
    none.empty_note = chosen ? "a one-axis map: see sweep.csv" : "no setting was recommended";
    emit(files.map, "No map (map.png)", plot::draw_curves(none, plot::ImageFormat::png, curve_size),
         curve_size);
  }
  // Every setting's map on the page (not as files): a fold or a tear shows at a glance.
  for (const SweepRow* row : all_rows(r)) {
    if (!row->embedded || row->map.cols < 2) continue;
    plot::MapFigure m;
    m.coords = &row->map;
    m.title = label_of(*row) + ": " + fmt::format("{}", row->map_points) + " points";
    m.subtitle =
        fmt::format("T {}, residual variance {} at {} dims", fixed(row->score.trustworthiness, 4),
                    fixed(row->residual[o.score_dims - 1], 4), o.score_dims);
    const plot::FigureSize size = plot::fitted_map_size(m, 440);
    page.figures.push_back({"The map at " + label_of(*row),
                            plot::draw_map(m, plot::ImageFormat::png, size), size.width,
                            size.height});
  }
  plot::ReportTable choice{"Recommendation", {{"recommended", r.recommendation}}};
  plot::ReportTable settings{"Settings", {}};
  for (const SweepRow* row : all_rows(r)) {
    std::string text;
    if (!row->embedded) {
      text = "not embedded: " + row->skipped;
    } else {
      text = fmt::format("T {} ({} to {}), C {}, kNN {}", fixed(row->score.trustworthiness, 4),
                         fixed(row->score.t_low, 4), fixed(row->score.t_high, 4),
                         fixed(row->score.continuity, 4), fixed(row->score.knn_preservation, 3));
      if (!row->linear)
        text += fmt::format(
            "; {} component{}, {} edges, {} points dropped, non-Euclidean ratio "
            "{}, suspects {}",
            row->components, row->components == 1 ? "" : "s", row->edges, row->dropped_points,
            fixed(row->negative_ratio, 3), suspects_text(*row));
      if (!row->flags.empty()) text += "; FLAGGED: " + joined(row->flags, "; ");
    }
    settings.rows.emplace_back(label_of(*row), text);
  }
  page.tables = {choice, settings};
  page.tables_before_figures = 2;
  for (const SweepRow* row : all_rows(r))
    for (const auto& w : row->warnings) page.warnings.push_back(label_of(*row) + ": " + w);
  outputs.write_text(files.report, plot::report_html(page));
}

}  // namespace unfurl::app
