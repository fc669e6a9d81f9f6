// `unfurl place --map MAP NEW -o PLACED`: new points into an existing map (made with
// --keep-geodesics) without moving it; engine/placement.hpp holds the method. The map's
// reference points are read from the file the map records, checked against its identity, and
// transformed as the map's record says; the new points get the same centres and transform.
#include <fmt/core.h>

#include <algorithm>
#include <chrono>
#include <memory>
#include <optional>

#include "apps/args.hpp"
#include "apps/command.hpp"
#include "apps/report.hpp"
#include "apps/run_info.hpp"
#include "apps/run_record.hpp"
#include "engine/error.hpp"
#include "engine/placement.hpp"
#include "io/atomic_output.hpp"
#include "io/csv_writer.hpp"
#include "io/hdf5_file.hpp"
#include "io/landmark_columns.hpp"
#include "io/map_file.hpp"

namespace unfurl::app {
namespace {

struct PlaceCommandArgs {
  std::string map;
  PointInputArgs points;  // the new points
  std::string reference;  // the map's points when moved; default: the path the map records
  std::size_t k = 0;      // 0: the map's k
  std::string search;     // empty: the map's
  double far_ratio = PlaceOptions{}.far_ratio;
  std::size_t block_rows = PlaceOptions{}.block_rows;
  std::string output;
  std::string csv;
  std::string json;
};

// The map's parameters as recorded ("parameters" attribute), or an empty object.
nlohmann::json recorded_parameters(const io::MapContents& m) {
  const auto& at = m.attributes;
  return at.contains("parameters") && at["parameters"].is_object() ? at["parameters"]
                                                                   : nlohmann::json::object();
}

// The map's reference points: its rows of the recorded input file, centred as the map records
// (or, for a map from before the centres were recorded, as the reader centres the file), after
// checking the file is the one the map was made from. `centres` gets the centres used.
PointSet reference_points(const GlobalOptions& g, const PlaceCommandArgs& a,
                          const io::MapContents& m, std::vector<double>& centres) {
  const nlohmann::json params = recorded_parameters(m);
  const auto& at = m.attributes;
  if (params.value("input_kind", std::string("points")) != "points" || !at.contains("input") ||
      !at["input"].is_object() || !at["input"].contains("path"))
    throw DataError(a.map +
                    ": records no point file as its input; placement needs the map's "
                    "points");
  const nlohmann::json& recorded = at["input"];
  const std::string file = a.reference.empty() ? recorded["path"].get<std::string>() : a.reference;
  io::PointReadOptions ro;
  ro.dataset = recorded.value("dataset", std::string());
  const std::string rows = params.value("rows", std::string());
  if (!rows.empty()) ro.rows = io::parse_row_range(rows);
  ro.drop_nonfinite = params.value("drop_nonfinite", false);
  if (!centres.empty()) ro.centres = centres;
  ro.stop = stop_token();
  if (!std::filesystem::exists(file))
    throw MissingInputError(
        fmt::format("{}: the map's points ({}) are missing; give --reference "
                    "with their new place",
                    file, a.map));
  const io::PointReadResult in = io::read_points(file, ro);
  const std::string differences = input_differences(recorded, point_input_identity(file, in));
  if (!differences.empty())
    throw DataError(
        fmt::format("{}: not the point file {} was made from: {}", file, a.map, differences));
  std::vector<std::int64_t> position(in.file_rows, -1);
  for (std::size_t i = 0; i < in.rows.size(); ++i) position[in.rows[i]] = i;
  PointSet ref(m.rows.size(), in.points.cols);
  for (std::size_t r = 0; r < m.rows.size(); ++r) {
    const std::int64_t row = m.rows[r];
    if (row < 0 || static_cast<std::size_t>(row) >= position.size() || position[row] < 0)
      throw DataError(fmt::format("{}: map row {} belongs to input row {}, which {} does not hold",
                                  a.map, r, row, file));
    std::copy_n(in.points.row(position[row]), in.points.cols, ref.row(r));
  }
  centres = in.centres;
  say(g, fmt::format("reference: {} points x {} columns from {}", ref.rows, ref.cols, file));
  return ref;
}

// The placed points of every block, in input order.
struct Placed {
  PointSet coords;
  std::vector<std::int64_t> rows;          // input row of each placed point
  std::vector<std::int64_t> dropped_rows;  // non-finite rows dropped (--drop-nonfinite)
  std::vector<float> nearest_ratio;
  std::vector<std::uint8_t> far;
  PlaceSummary summary;     // over all blocks; worst[].row is an input row
  nlohmann::json identity;  // of the new point file
};

io::MapContents placed_map(const PlaceCommandArgs& a, const io::MapContents& m, Placed& r,
                           const PlaceOptions& o) {
  io::MapContents out;
  out.coords = std::move(r.coords);
  out.rows = r.rows;
  out.landmark_rows = m.landmark_rows;
  out.landmark_coords = m.landmark_coords;
  out.spectrum = m.spectrum;
  out.spectrum_attributes = m.spectrum_attributes;
  // The map's preprocessing and centres, so that `score` sees the new points as placed.
  out.preprocess = m.preprocess;
  out.input.centres = m.input.centres;
  out.input.dropped_nonfinite_rows = std::move(r.dropped_rows);
  io::MapPlacedRecord placed{.nearest_ratio = std::move(r.nearest_ratio),
                             .far_rows = {},
                             .typical_distance = r.summary.typical_distance,
                             .far_ratio = o.far_ratio};
  for (std::size_t i = 0; i < r.far.size(); ++i)
    if (r.far[i]) placed.far_rows.push_back(r.rows[i]);
  out.placement =
      io::MapPlacementRecord{.triangulation = std::nullopt, .placed = std::move(placed)};
  out.attributes = {{"command", "place"},
                    {"input", r.identity},
                    {"map", io::input_identity(a.map, "")},
                    {"parameters",
                     {{"input_kind", "points"},
                      {"k", o.k},
                      {"search", search_name(o.search)},
                      {"far_ratio", o.far_ratio},
                      {"rows", a.points.rows},
                      {"drop_nonfinite", a.points.drop_nonfinite}}},
                    {"seconds", r.summary.seconds}};
  return out;
}

void print_summary(const GlobalOptions& g, const PlaceSummary& s) {
  say(g, fmt::format("placed {} points into a map of {} points ({} landmarks, k {}, search {}) "
                     "in {:.2f} s; typical neighbour distance {:.4g}",
                     s.points, s.reference, s.landmarks, s.k, search_name(s.search_used), s.seconds,
                     s.typical_distance));
  std::string worst;
  for (const FarPoint& f : s.worst)
    worst += fmt::format("{}{} ({:.1f})", worst.empty() ? "" : ", ", f.row, f.ratio);
  say(g, fmt::format("far from the map (nearest reference point beyond {:g} typical distances): "
                     "{}{}",
                     s.far_ratio, s.far, s.far ? "; farthest rows: " + worst : ""));
  for (const auto& w : s.warnings) say(g, "warning: placement: " + w);
}

// Reads and places the new points block by block (PlaceOptions::block_rows rows of the file
// at a time), so that memory holds the map, one block and the placed coordinates.
Placed place_in_blocks(const PlaceCommandArgs& a, const PointSet& reference,
                       const LandmarkColumns& columns, const Triangulation& triangulation,
                       const PreprocessModel* model, io::PointReadOptions ro,
                       const PlaceOptions& o) {
  const auto start = std::chrono::steady_clock::now();
  const io::RowRange asked = ro.rows.value_or(io::RowRange{});
  Placed out;
  out.coords = PointSet(0, triangulation.dims);
  // The file's length first, from one row (the reader checks --rows against it).
  io::PointReadOptions probe = ro;
  probe.rows = io::RowRange{asked.begin, asked.begin + 1};
  probe.drop_nonfinite = true;
  const std::size_t file_rows = io::read_points(a.points.file, probe).file_rows;
  const std::size_t end = std::min(asked.end.value_or(file_rows), file_rows);
  std::vector<FarPoint> worst;
  const ProgressStep step = stop_token().step("placement", end - std::min(end, asked.begin));
  for (std::size_t b = asked.begin; b < end; b += o.block_rows) {
    ro.rows = io::RowRange{b, std::min(end, b + o.block_rows)};
    io::PointReadResult in = io::read_points(a.points.file, ro);
    if (in.points.cols != reference.cols)
      throw DataError(fmt::format("{}: {} columns, the map's points have {}", a.points.file,
                                  in.points.cols, reference.cols));
    if (out.identity.is_null()) out.identity = point_input_identity(a.points.file, in);
    out.dropped_rows.insert(out.dropped_rows.end(), in.dropped_rows.begin(), in.dropped_rows.end());
    if (in.points.rows == 0) continue;
    const PointSet block = model ? apply_preprocess(*model, in.points) : std::move(in.points);
    const PlaceResult r = place_points(reference, columns, triangulation, block, o, stop_token());
    out.coords.values.insert(out.coords.values.end(), r.coords.values.begin(),
                             r.coords.values.end());
    out.coords.rows += r.coords.rows;
    out.rows.insert(out.rows.end(), in.rows.begin(), in.rows.end());
    out.nearest_ratio.insert(out.nearest_ratio.end(), r.nearest_ratio.begin(),
                             r.nearest_ratio.end());
    out.far.insert(out.far.end(), r.far.begin(), r.far.end());
    out.summary = r.summary;  // the per-map figures; counts are summed below
    for (const FarPoint& f : r.summary.worst)
      worst.push_back({static_cast<std::size_t>(in.rows[f.row]), f.ratio});
  }
  if (out.rows.empty()) throw DataError(a.points.file + ": no points to place");
  PlaceSummary& s = out.summary;
  s.points = out.rows.size();
  s.far = static_cast<std::size_t>(std::count(out.far.begin(), out.far.end(), 1));
  std::sort(worst.begin(), worst.end(), [](const FarPoint& x, const FarPoint& y) {
    return x.ratio > y.ratio || (x.ratio == y.ratio && x.row < y.row);
  });
  worst.resize(std::min(worst.size(), o.worst));
  s.worst = worst;
  // The blocks' own far counts give way to the whole run's.
  std::erase_if(s.warnings, [](const std::string& w) {
    return w.find(" points are far from the map") != std::string::npos;
  });
  if (s.far > 0)
    s.warnings.push_back(
        fmt::format("{} of {} points are far from the map; their coordinates "
                    "are extrapolations",
                    s.far, s.points));
  s.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  return out;
}

void run_place(const GlobalOptions& g, const PlaceCommandArgs& a) {
  apply_globals(g);
  io::OutputSet outputs(stop_token());
  outputs.add_input(a.map, "--map");
  outputs.add_input(a.points.file, "NEW");
  const std::size_t map_out = outputs.add(a.output, "-o");
  std::optional<std::size_t> csv_out, json_out;
  if (!a.csv.empty()) csv_out = outputs.add(a.csv, "--csv");
  if (!a.json.empty()) json_out = outputs.add(a.json, "--json");
  io::PointReadOptions read_options = to_read_options(a.points);

  {
    const io::H5Reader probe(a.map);
    if (!probe.has_dataset("/coords") || !probe.has_dataset("/rows") ||
        !probe.has_attribute("/", "format_version"))
      throw DataError(a.map + ": not an unfurl map (no /coords, /rows or format_version)");
  }
  const io::MapContents m = io::read_map(a.map, false);
  if (!m.placement || !m.placement->triangulation || !io::has_landmark_rows(a.map))
    throw DataError(a.map +
                    ": keeps no placement record (/landmarks/geodesic, /placement/*); make the "
                    "map with embed --keep-geodesics");
  const nlohmann::json params = recorded_parameters(m);
  std::vector<double> centres = m.input.centres.value_or(std::vector<double>{});
  const std::optional<PreprocessModel>& model = m.preprocess;

  PlaceOptions o;
  o.k = a.k ? a.k : params.value("k", std::size_t{10});
  if (o.k == 0) o.k = PlaceOptions{}.k;  // a radius map records k 0
  const std::string search =
      a.search.empty() ? params.value("search", std::string("automatic")) : a.search;
  o.search = from_name(search, {Search::automatic, Search::tree, Search::scan}, search_name,
                       Search::automatic);
  o.far_ratio = a.far_ratio;
  o.block_rows = a.block_rows;

  PointSet reference = reference_points(g, a, m, centres);
  if (model) {
    reference = apply_preprocess(*model, reference);
    say(g, fmt::format("points transformed as the map's /preprocess records (scale {}, metric "
                       "{}, {} components)",
                       scale_name(model->scale), metric_name(model->metric), model->components));
  }
  o.validate(reference.rows);
  const Triangulation& triangulation = *m.placement->triangulation;
  const LandmarkColumns columns =
      io::read_landmark_columns(a.map, m.coords.rows, triangulation.landmarks, stop_token());
  o.typical_distance = typical_neighbour_distance(reference, o, stop_token());
  read_options.centres = centres;
  read_options.stop = stop_token();
  Placed placed = place_in_blocks(a, reference, columns, triangulation, model ? &*model : nullptr,
                                  read_options, o);
  print_summary(g, placed.summary);

  const PlaceSummary summary = placed.summary;
  io::MapContents out = placed_map(a, m, placed, o);
  out.attributes["run"] = run_record();
  io::write_map(outputs, map_out, out);
  if (csv_out) io::write_coordinates_csv(outputs, *csv_out, out.coords, out.rows);
  if (json_out) {
    nlohmann::json worst = nlohmann::json::array();
    for (const FarPoint& f : summary.worst) worst.push_back({{"row", f.row}, {"ratio", f.ratio}});
    write_json_file(outputs, *json_out,
                    {{"map", out.attributes["map"]},
                     {"input", out.attributes["input"]},
                     {"parameters", out.attributes["parameters"]},
                     {"run", out.attributes["run"]},
                     {"placement",
                      {{"points", summary.points},
                       {"reference", summary.reference},
                       {"landmarks", summary.landmarks},
                       {"search", search_name(summary.search_used)},
                       {"typical_distance", summary.typical_distance},
                       {"far", summary.far},
                       {"worst", worst},
                       {"seconds", summary.seconds},
                       {"warnings", summary.warnings}}},
                     {"peak_memory_bytes", peak_memory_bytes()}});
  }
  outputs.commit();
  say(g, fmt::format("wrote {} (peak memory {})", a.output, human_bytes(peak_memory_bytes())));
}

}  // namespace

void add_place_command(CLI::App& app, GlobalOptions& g) {
  auto* cmd = app.add_subcommand(
      "place", "Place new points into an existing map (made with embed --keep-geodesics)");
  auto a = std::make_shared<PlaceCommandArgs>();
  cmd->add_option("--map", a->map, "Map file made by embed --keep-geodesics")->required();
  add_point_input(cmd, a->points, "NEW");
  cmd->add_option("--reference", a->reference,
                  "The map's point file, when it has moved (default: the path the map records; "
                  "its identity must still match)");
  cmd->add_option("--k", a->k, "Reference neighbours per new point (default: the map's k)")
      ->transform(whole_number(1, max_count));
  cmd->add_option("--search", a->search, "Exact search back end (default: the map's)")
      ->check(CLI::IsMember({"automatic", "tree", "scan"}));
  cmd->add_option("--far-ratio", a->far_ratio,
                  "Flag a point far from the map when its nearest reference point is beyond this "
                  "many typical neighbour distances")
      ->check(non_negative_number())
      ->capture_default_str();
  cmd->add_option("--block-rows", a->block_rows,
                  "New points read and placed at a time (bounds the memory beside the map)")
      ->transform(whole_number(1, max_count))
      ->capture_default_str();
  cmd->add_option("-o,--out", a->output, "Placed map to write (HDF5)")->required();
  cmd->add_option("--csv", a->csv, "Also write the placed coordinates as CSV");
  cmd->add_option("--json", a->json, "Also write the placement summary as JSON");
  cmd->callback([&g, a] { run_place(g, *a); });
}

}  // namespace unfurl::app
