// `unfurl sweep INPUT --k 5:40:5 [--dims 1:6] [--out-dir DIR]`: the same points embedded at
// several neighbourhood settings from one shared search (engine/sweep.hpp), a table on stdout
// with a recommendation, and sweep.csv, sweep.json, the figures and report.html in DIR.
#include <fmt/core.h>

#include <cmath>
#include <memory>
#include <optional>

#include "apps/args.hpp"
#include "apps/command.hpp"
#include "apps/created_folder.hpp"
#include "apps/option_scope.hpp"
#include "apps/run_info.hpp"
#include "apps/sweep_outputs.hpp"
#include "engine/sweep.hpp"
#include "io/points_reader.hpp"

namespace unfurl::app {
namespace {

struct SweepArgs {
  PointInputArgs input;
  std::string k, radius;  // the settings as typed
  bool k_given = false, radius_given = false;
  std::string dims = "1:6";
  std::size_t score_dims = 2;
  bool score_dims_given = false;
  GraphArgs graph;
  MapArgs map;
  ScoreArgs score;
  std::string out_dir;
};

constexpr const char* kExpected = "expected LOW:HIGH:STEP, LOW:HIGH or a list A,B,C";

std::vector<std::string> split(const std::string& text, char at) {
  std::vector<std::string> parts;
  std::size_t from = 0;
  for (std::size_t to; (to = text.find(at, from)) != std::string::npos; from = to + 1)
    parts.push_back(text.substr(from, to - from));
  parts.push_back(text.substr(from));
  return parts;
}

// One value as typed: a whole number of at least 1, or a positive decimal number.
double value_of(const std::string& option, const std::string& typed, std::string piece, bool whole,
                bool step = false) {
  const std::string refused =
      whole ? whole_number(step ? 0 : 1, max_count)(piece) : non_negative_number(!step)(piece);
  if (!refused.empty()) throw OptionError(option + " " + typed + ": " + refused);
  const double value = std::stod(piece);
  if (step && value == 0)
    throw OptionError(option + " " + typed + ": the step must be positive, got " + piece);
  return value;
}

// The settings of `typed`, ascending: LOW:HIGH:STEP (HIGH included when the steps reach it),
// LOW:HIGH (whole numbers only: step 1), A,B,C (ascending) or one value.
std::vector<double> parse_settings(const std::string& option, const std::string& typed, bool whole,
                                   std::size_t most) {
  if (typed.empty()) throw OptionError(option + ": empty; " + kExpected);
  std::vector<double> values;
  if (typed.find(':') != std::string::npos) {
    const auto parts = split(typed, ':');
    if (parts.size() > 3 || (parts.size() == 2 && !whole))
      throw OptionError(option + " " + typed + ": " +
                        (parts.size() == 2 ? "a radius range needs a step, LOW:HIGH:STEP"
                                           : std::string(kExpected)));
    const double low = value_of(option, typed, parts[0], whole);
    const double high = value_of(option, typed, parts[1], whole);
    const double step = parts.size() == 3 ? value_of(option, typed, parts[2], whole, true) : 1.0;
    if (low > high)
      throw OptionError(option + " " + typed + ": the range is reversed (" + parts[0] + " > " +
                        parts[1] + "); write LOW:HIGH");
    // A step that lands on HIGH up to rounding still includes it.
    const double count = std::floor((high - low) / step + 1e-9) + 1;
    if (count > static_cast<double>(most))
      throw OptionError(option + " " + typed + ": " + fmt::format("{:.0f}", count) +
                        " settings; at most " + std::to_string(most));
    for (std::size_t i = 0; i < static_cast<std::size_t>(count); ++i)
      values.push_back(low + static_cast<double>(i) * step);
  } else {
    for (const auto& piece : split(typed, ',')) {
      values.push_back(value_of(option, typed, piece, whole));
      if (values.size() > 1 && !(values.back() > values[values.size() - 2]))
        throw OptionError(option + " " + typed + ": the list must ascend without repeats");
    }
    if (values.size() > most)
      throw OptionError(option + " " + typed + ": " + std::to_string(values.size()) +
                        " settings; at most " + std::to_string(most));
  }
  return values;
}

SweepOptions sweep_options(const GlobalOptions& g, const SweepArgs& a, std::size_t points) {
  SweepOptions o;
  const std::size_t most = o.max_settings;
  if (a.radius_given) {
    o.settings.clear();
    for (double r : parse_settings("--radius", a.radius, false, most))
      o.settings.push_back(WithinRadius{r});
  } else if (a.k_given) {
    o.settings.clear();
    for (double k : parse_settings("--k", a.k, true, most))
      o.settings.push_back(NearestK{static_cast<std::size_t>(k)});
  } else {
    // The default range adapts to a small input (README "Small inputs"): k below N only.
    std::erase_if(o.settings,
                  [&](const Neighbourhood& s) { return std::get<NearestK>(s).k >= points; });
    if (o.settings.empty() && points >= 2) o.settings.push_back(NearestK{points - 1});
  }
  if (a.dims.find(',') != std::string::npos || split(a.dims, ':').size() > 2)
    throw OptionError("--dims " + a.dims + ": expected LOW:HIGH or one count");
  const auto dims = parse_settings("--dims", a.dims, true, most);
  o.dims_low = static_cast<std::size_t>(dims.front());
  o.dims_high = static_cast<std::size_t>(dims.back());
  o.score_dims = a.score_dims_given ? a.score_dims : std::min(a.score_dims, o.dims_high);
  o.graph = to_graph_options(a.graph);
  o.components = to_component_options(a.graph);
  EmbedOptions map;
  apply_map_options(a.map, g.seed, map);
  o.landmarks = map.landmarks;
  o.order = map.order;
  AssessOptions assess = to_assess_options(a.score, g.seed);
  adapt_score_k(a.score, points, assess);
  const std::size_t exact_limit = o.scores.exact_limit;  // the sweep's own (engine/sweep.hpp)
  o.scores = assess.neighbourhoods;
  o.scores.exact_limit = exact_limit;
  return o;
}

void run_sweep(const GlobalOptions& g, SweepArgs& a, const CLI::App& cmd) {
  apply_globals(g);
  a.k_given = cmd.count("--k") > 0;  // also when given empty: refused, not the default
  a.radius_given = cmd.count("--radius") > 0;
  RunShape shape;
  shape.exact = std::holds_alternative<AllLandmarks>(a.map.landmarks);
  shape.input_format = io::detect_point_format(a.input.file, a.input.format);
  refuse_unused_options(cmd, shape);
  io::OutputSet outputs(stop_token());
  outputs.add_input(a.input.file, "input");
  std::optional<CreatedFolder> folder;
  std::optional<SweepFiles> files;
  if (!a.out_dir.empty()) {
    folder.emplace(a.out_dir, "--out-dir");
    files = add_sweep_files(outputs, a.out_dir);
  }
  const io::PointReadResult in = io::read_points(a.input.file, to_read_options(a.input));
  say(g, fmt::format("points: {} rows x {} columns from {}", in.points.rows, in.points.cols,
                     a.input.file));
  for (const auto& w : in.warnings) say(g, "warning: points: " + w);
  const SweepOptions options = sweep_options(g, a, in.points.rows);
  options.validate(in.points.rows);
  say(g, fmt::format("sweep: {} settings from {} to {}, one search at the largest",
                     options.settings.size(), setting_name(options.settings.front()),
                     setting_name(options.settings.back())));
  const SweepResult r = sweep_neighbourhoods(in.points, options, stop_token());
  say(g, sweep_table(r, options));
  say(g, fmt::format("search {:.2f} s, whole sweep {:.2f} s; land * : landmarks of its own "
                     "(the setting drops a node holding a shared one)",
                     r.search_seconds, r.seconds));
  // No usable setting: the table above says why per row; nothing is written.
  if (!r.usable) throw DataError(a.input.file + ": " + r.recommendation);
  say(g, "recommendation: " + r.recommendation);
  if (files) {
    nlohmann::json doc = sweep_json(r, options);
    doc["input"] = point_input_identity(a.input.file, in);
    doc["parameters"] = {
        {"rule", std::holds_alternative<WithinRadius>(options.settings.front()) ? "radius" : "k"},
        {"dims", {options.dims_low, options.dims_high}},
        {"score_dims", options.score_dims},
        {"mutual", options.graph.mutual},
        {"disconnected", a.graph.disconnected},
        {"landmarks", r.rows.empty() ? 0 : r.rows.back().landmarks},
        {"pick", a.map.pick},
        {"threads", g.threads}};
    doc["seed"] = g.seed;
    doc["peak_memory_bytes"] = peak_memory_bytes();
    const std::string name = std::filesystem::path(a.input.file).filename().string();
    write_sweep_files(outputs, *files, r, options, doc, name);
    outputs.commit();
    folder->keep();
    say(g, fmt::format("wrote {}/sweep.csv, sweep.json, the figures and report.html (open {})",
                       a.out_dir, (std::filesystem::path(a.out_dir) / "report.html").string()));
  }
}

}  // namespace

void add_sweep_command(CLI::App& app, GlobalOptions& g) {
  auto* cmd = app.add_subcommand(
      "sweep", "Embed at several neighbourhood settings from one search and recommend one");
  auto a = std::make_shared<SweepArgs>();
  add_point_input(cmd, a->input, "INPUT");
  auto* k = cmd->add_option("--k", a->k,
                            "k settings: LOW:HIGH:STEP (HIGH included), LOW:HIGH or a list "
                            "A,B,C")
                ->default_str("5:40:5 (k below N only)");
  cmd->add_option("--radius", a->radius,
                  "Radius settings instead: LOW:HIGH:STEP or a list A,B,C (data units)")
      ->excludes(k);
  cmd->add_option("--dims", a->dims,
                  "Map axes: residual variance for LOW..HIGH axes, maps of HIGH axes")
      ->capture_default_str();
  cmd->add_option("--score-dims", a->score_dims,
                  "Axes that T, C and the flags are taken on (at most the HIGH of --dims)")
      ->transform(whole_number(0, max_count))
      ->each([a](const std::string&) { a->score_dims_given = true; })
      ->capture_default_str();
  add_graph_options(cmd, a->graph, true, false);
  add_map_options(cmd, a->map, false);
  add_score_options(cmd, a->score);
  cmd->add_option("--out-dir", a->out_dir,
                  "Write sweep.csv, sweep.json, the figures and report.html into this folder "
                  "(created when missing)");
  cmd->callback([&g, a, cmd] { run_sweep(g, *a, *cmd); });
}

}  // namespace unfurl::app
