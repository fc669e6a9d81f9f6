// `unfurl score MAP --points POINTS`: quality scores of a map, ours or any N x m array made by
// another method, against the points it was made from.
#include <fmt/core.h>

#include <memory>
#include <optional>

#include "apps/args.hpp"
#include "apps/command.hpp"
#include "apps/option_scope.hpp"
#include "apps/report.hpp"
#include "apps/run_info.hpp"
#include "engine/error.hpp"
#include "io/atomic_output.hpp"
#include "io/map_file.hpp"

namespace unfurl::app {
namespace {

struct ScoreCommandArgs {
  std::string map;
  std::string map_dataset;
  PointInputArgs points;
  ScoreArgs score;
  std::size_t dimension_k = 10;
  bool dimension_k_given = false;  // else min(10, N - 1)
  std::string json;
  bool points_changed_ok = false;  // score even when --points is not the map's recorded input
};

// Remarks for stderr that are not errors. They are printed once the run is known to go on,
// so that a refusal stays the one line on stderr.
using Notes = std::vector<std::string>;
void print_notes(const GlobalOptions& g, const Notes& notes) {
  for (const auto& line : notes) log_remark(line, g.quiet);
}

// Refuses (DataError) to score a map against points other than those it was made from,
// unless --points-changed-ok; a map without such a record gets a note.
void check_points_identity(Notes& notes, const ScoreCommandArgs& a,
                           const nlohmann::json& attributes, const nlohmann::json& now) {
  const bool from_points =
      !attributes.contains("parameters") || !attributes["parameters"].is_object() ||
      attributes["parameters"].value("input_kind", std::string("points")) == "points";
  if (!from_points || !attributes.contains("input") || !attributes["input"].is_object()) {
    notes.push_back(a.map + " records no point file as its input: cannot check that " +
                    a.points.file + " is the one it was made from");
    return;
  }
  const std::string differences = input_differences(attributes["input"], now);
  if (differences.empty()) return;
  if (!a.points_changed_ok)
    throw DataError(
        fmt::format("--points {}: not the point file {} was made from: {}; give "
                    "--points-changed-ok to score against it anyway",
                    a.points.file, a.map, differences));
  notes.push_back(
      fmt::format("--points {} differs from the input {} records ({}); scored anyway "
                  "(--points-changed-ok)",
                  a.points.file, a.map, differences));
}

void run_score(const GlobalOptions& g, const ScoreCommandArgs& a) {
  apply_globals(g);
  io::OutputSet outputs(stop_token());  // the output checked before any work
  outputs.add_input(a.map, "map");
  outputs.add_input(a.points.file, "--points");
  std::optional<std::size_t> json_out;
  if (!a.json.empty()) json_out = outputs.add(a.json, "--json");
  AssessOptions options = to_assess_options(a.score, g.seed);

  std::optional<io::MapContents> ours;
  if (a.map_dataset.empty() && io::is_map_file(a.map)) ours = io::read_map(a.map, true);
  io::PointReadOptions read_options = to_read_options(a.points);
  // The points as `embed` saw them: minus the centres the map records.
  if (ours) read_options.centres = ours->input.centres;
  const io::PointReadResult in = io::read_points(a.points.file, read_options);
  for (const auto& w : in.warnings) say(g, "warning: points: " + w);
  PointSet input;
  PointSet map;
  std::optional<DistanceRows> geodesic;
  AxisSpectrum spectrum;
  Notes notes;
  if (ours) {
    io::MapContents& m = *ours;
    check_points_identity(notes, a, m.attributes, point_input_identity(a.points.file, in));
    // Map rows name input rows; find each among the rows just read.
    std::vector<std::int64_t> position(in.file_rows, -1);
    for (std::size_t i = 0; i < in.rows.size(); ++i) position[in.rows[i]] = i;
    input = PointSet(m.rows.size(), in.points.cols);
    for (std::size_t r = 0; r < m.rows.size(); ++r) {
      const std::int64_t row = m.rows[r];
      if (row < 0 || static_cast<std::size_t>(row) >= position.size() || position[row] < 0)
        throw DataError(
            fmt::format("{}: map row {} belongs to input row {}, which {} does not "
                        "provide (wrong --points, --rows or --dataset?)",
                        a.map, r, row, a.points.file));
      std::copy_n(in.points.row(position[row]), in.points.cols, input.row(r));
    }
    if (const auto& model = m.preprocess) {
      // Score in the space the neighbour search of `embed` saw.
      input = apply_preprocess(*model, input);
      say(g, fmt::format("points transformed as the map's /preprocess records (scale {}, metric "
                         "{}, {} components)",
                         scale_name(model->scale), metric_name(model->metric), model->components));
    }
    map = std::move(m.coords);
    geodesic = std::move(m.landmark_geodesic);
    spectrum = axis_spectrum(m.spectrum, m.spectrum_attributes);
  } else {
    io::PointReadOptions ro;
    ro.dataset = a.map_dataset;
    io::PointReadResult foreign = io::read_points(a.map, ro);
    if (foreign.points.rows != in.points.rows)
      throw DataError(fmt::format("{}: the map has {} rows but {} has {} points", a.map,
                                  foreign.points.rows, a.points.file, in.points.rows));
    map = std::move(foreign.points);
    input = in.points;
    notes.push_back(a.map + " is an array without a record of its input: cannot check that " +
                    a.points.file + " is the point file it was made from");
  }
  // The smallest input scored: 3 points (T and C need k < N/2, so k = 1 needs N >= 3).
  if (input.rows < 3)
    throw DataError(
        fmt::format("{}: {} points; score needs at least 3", a.points.file, input.rows));
  adapt_score_k(a.score, input.rows, options);
  // --dimension-k 0 skips the estimate; default min(10, N - 1), none below 3 points.
  const std::size_t dimension_k =
      a.dimension_k_given ? a.dimension_k : default_dimension_k(input.rows);
  if (dimension_k > 0)
    options.dimension = DimensionOptions{.k = dimension_k};
  else
    options.dimension.reset();
  options.validate(input.rows);
  print_notes(g, notes);
  say(g, fmt::format("scoring a map of {} rows x {} dims against {} points x {} columns", map.rows,
                     map.cols, input.rows, input.cols));
  const Assessment scores =
      assess_map(input, map, geodesic ? &*geodesic : nullptr, spectrum, options, stop_token());
  print_assessment(g, scores);
  if (json_out) {
    write_json_file(outputs, *json_out,
                    {{"map", a.map},
                     {"points", point_input_identity(a.points.file, in)},
                     {"seed", g.seed},
                     {"quality", assessment_json(scores)}});
    outputs.commit();
  }
}

}  // namespace

void add_score_command(CLI::App& app, GlobalOptions& g) {
  auto* cmd =
      app.add_subcommand("score", "Score a map (ours or any N x m array) against its points");
  auto a = std::make_shared<ScoreCommandArgs>();
  cmd->add_option("MAP", a->map, "Map file: an unfurl map, or an N x m array (HDF5, CSV, NPY)")
      ->required();
  cmd->add_option("--map-dataset", a->map_dataset,
                  "Read the map from this HDF5 dataset (an N x m array in input row order)");
  add_point_input(cmd, a->points, "");
  add_score_options(cmd, a->score);
  cmd->add_option("--dimension-k", a->dimension_k,
                  "Neighbours for the intrinsic dimension estimate (0: skip)")
      ->transform(whole_number(0, max_count))
      ->each([a](const std::string&) { a->dimension_k_given = true; })
      ->default_str("10 (N - 1 below 11 points)");
  cmd->add_option("--json", a->json, "Also write every figure as JSON");
  cmd->add_flag("--points-changed-ok", a->points_changed_ok,
                "Score even when --points differs from the input the map records (rows, "
                "columns, size or modification time)");
  cmd->callback([&g, a, cmd] {
    RunShape shape;
    shape.score_exact = a->score.method == "exact";
    if (!a->map_dataset.empty()) shape.map_format = io::detect_point_format(a->map);
    refuse_unused_options(*cmd, shape);
    run_score(g, *a);
  });
}

}  // namespace unfurl::app
