// `unfurl score MAP --points POINTS`: quality scores of a map, ours or any N x m array made by
// another method, against the points it was made from.
#include <fmt/core.h>

#include <memory>
#include <optional>

#include "apps/args.hpp"
#include "apps/command.hpp"
#include "apps/preprocess_record.hpp"
#include "apps/report.hpp"
#include "engine/error.hpp"
#include "io/atomic_output.hpp"
#include "io/hdf5_file.hpp"
#include "io/map_file.hpp"

namespace unfurl::app {
namespace {

struct ScoreCommandArgs {
  std::string map;
  std::string map_dataset;
  PointInputArgs points;
  ScoreArgs score;
  std::size_t dimension_k = 10;
  std::string json;
};

bool is_unfurl_map(const std::string& file) {
  if (io::detect_point_format(file) != "hdf5") return false;
  const io::H5Reader r(file);
  return r.has_dataset("/coords") && r.has_dataset("/rows") &&
         r.has_attribute("/", "format_version");
}

void run_score(const GlobalOptions& g, const ScoreCommandArgs& a) {
  apply_globals(g);
  if (!a.json.empty()) io::AtomicOutput{a.json};  // fail before any work
  AssessOptions options = to_assess_options(a.score, g.seed);
  options.dimension_k = a.dimension_k;

  const io::PointReadResult in = io::read_points(a.points.file, to_read_options(a.points));
  PointSet input;
  PointSet map;
  std::optional<DistanceRows> geodesic;
  AxisSpectrum spectrum;
  if (a.map_dataset.empty() && is_unfurl_map(a.map)) {
    io::MapContents m = io::read_map(a.map, true);
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
    if (auto model = preprocess_from_arrays(m.extras)) {
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
  }
  validate_score_options(options, input.rows);
  say(g, fmt::format("scoring a map of {} rows x {} dims against {} points x {} columns", map.rows,
                     map.cols, input.rows, input.cols));
  const Assessment scores =
      assess_map(input, map, geodesic ? &*geodesic : nullptr, spectrum, options, stop_token());
  print_assessment(g, scores);
  if (!a.json.empty())
    write_json_file(a.json, {{"map", a.map},
                             {"points", io::input_identity(a.points.file, in.dataset)},
                             {"seed", g.seed},
                             {"quality", assessment_json(scores)}});
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
      ->capture_default_str();
  cmd->add_option("--json", a->json, "Also write every figure as JSON");
  cmd->callback([&g, a] { run_score(g, *a); });
}

}  // namespace unfurl::app
