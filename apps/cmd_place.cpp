// `unfurl place --map MAP NEW -o PLACED`: new points into an existing map (made with
// --keep-geodesics) without moving it; engine/placement.hpp holds the method. The map's
// reference points are read from the file the map records, checked against its identity, and
// transformed as the map's record says; the new points get the same centres and transform.
#include <fmt/core.h>

#include <memory>
#include <optional>

#include "apps/args.hpp"
#include "apps/command.hpp"
#include "apps/preprocess_record.hpp"
#include "apps/report.hpp"
#include "apps/run_info.hpp"
#include "engine/error.hpp"
#include "engine/placement.hpp"
#include "io/atomic_output.hpp"
#include "io/csv_writer.hpp"
#include "io/hdf5_file.hpp"
#include "io/map_file.hpp"
#include "io/placement_record.hpp"

namespace unfurl::app {
namespace {

struct PlaceCommandArgs {
  std::string map;
  PointInputArgs points;  // the new points
  std::string reference;  // the map's points when moved; default: the path the map records
  std::size_t k = 0;      // 0: the map's k
  std::string search;     // empty: the map's
  double far_ratio = PlaceOptions{}.far_ratio;
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

// The map's reference points: its rows of the recorded input file, with the map's centres and
// preprocessing, after checking the file is the one the map was made from.
PointSet reference_points(const GlobalOptions& g, const PlaceCommandArgs& a,
                          const io::MapContents& m, const std::vector<double>& centres) {
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
  ro.centres = centres;
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
  say(g, fmt::format("reference: {} points x {} columns from {}", ref.rows, ref.cols, file));
  return ref;
}

io::MapContents placed_map(const PlaceCommandArgs& a, const io::MapContents& m,
                           const io::PointReadResult& in, const PlaceResult& r,
                           const PlaceOptions& o) {
  io::MapContents out;
  out.coords = r.coords;
  out.rows = in.rows;
  out.landmark_rows = m.landmark_rows;
  out.landmark_coords = m.landmark_coords;
  out.spectrum = m.spectrum;
  out.spectrum_attributes = m.spectrum_attributes;
  // The map's preprocessing and centres, so that `score` sees the new points as placed.
  for (const auto& extra : m.extras)
    if (extra.path.rfind("/preprocess/", 0) == 0 || extra.path == "/input/centres")
      out.extras.push_back(extra);
  std::vector<double> ratio(r.nearest_ratio.begin(), r.nearest_ratio.end());
  std::vector<double> far;
  for (std::size_t i = 0; i < r.far.size(); ++i)
    if (r.far[i]) far.push_back(static_cast<double>(in.rows[i]));
  const nlohmann::json why = {{"typical_distance", r.summary.typical_distance},
                              {"far_ratio", o.far_ratio}};
  out.extras.push_back({"/placement/nearest_ratio", ratio, {ratio.size()}, why});
  out.extras.push_back({"/placement/far_rows", far, {far.size()}, why});
  out.attributes = {{"command", "place"},
                    {"input", point_input_identity(a.points.file, in)},
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

void print_summary(const GlobalOptions& g, const PlaceSummary& s,
                   const std::vector<std::int64_t>& rows) {
  say(g, fmt::format("placed {} points into a map of {} points ({} landmarks, k {}, search {}) "
                     "in {:.2f} s; typical neighbour distance {:.4g}",
                     s.points, s.reference, s.landmarks, s.k, search_name(s.search_used), s.seconds,
                     s.typical_distance));
  std::string worst;
  for (const FarPoint& f : s.worst)
    worst += fmt::format("{}{} ({:.1f})", worst.empty() ? "" : ", ", rows[f.row], f.ratio);
  say(g, fmt::format("far from the map (nearest reference point beyond {:g} typical distances): "
                     "{}{}",
                     s.far_ratio, s.far, s.far ? "; farthest rows: " + worst : ""));
  for (const auto& w : s.warnings) say(g, "warning: placement: " + w);
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
  if (!io::has_placement_record(a.map))
    throw DataError(a.map +
                    ": keeps no placement record (/landmarks/geodesic, /placement/*); make the "
                    "map with embed --keep-geodesics");
  const io::MapContents m = io::read_map(a.map, false);
  const nlohmann::json params = recorded_parameters(m);
  const std::vector<double> centres =
      input_centres_from_arrays(m.extras).value_or(std::vector<double>{});
  const std::optional<PreprocessModel> model = preprocess_from_arrays(m.extras);

  PlaceOptions o;
  o.k = a.k ? a.k : params.value("k", std::size_t{10});
  if (o.k == 0) o.k = PlaceOptions{}.k;  // a radius map records k 0
  const std::string search =
      a.search.empty() ? params.value("search", std::string("automatic")) : a.search;
  o.search = from_name(search, {Search::automatic, Search::tree, Search::scan}, search_name,
                       Search::automatic);
  o.far_ratio = a.far_ratio;

  PointSet reference = reference_points(g, a, m, centres);
  if (!centres.empty()) read_options.centres = centres;
  read_options.stop = stop_token();
  io::PointReadResult in = io::read_points(a.points.file, read_options);
  for (const auto& w : in.warnings) say(g, "warning: points: " + w);
  if (in.points.cols != reference.cols)
    throw DataError(fmt::format("{}: {} columns, the map's points have {}", a.points.file,
                                in.points.cols, reference.cols));
  PointSet points = std::move(in.points);
  if (model) {
    reference = apply_preprocess(*model, reference);
    points = apply_preprocess(*model, points);
    say(g, fmt::format("points transformed as the map's /preprocess records (scale {}, metric "
                       "{}, {} components)",
                       scale_name(model->scale), metric_name(model->metric), model->components));
  }
  o.validate(reference.rows);
  const io::PlacementRecord record =
      io::read_placement_record(a.map, m.coords.rows, m.coords.cols, stop_token());
  const PlaceResult r =
      place_points(reference, record.columns, record.triangulation, points, o, stop_token());
  print_summary(g, r.summary, in.rows);

  const io::MapContents placed = placed_map(a, m, in, r, o);
  io::write_map(outputs, map_out, placed);
  if (csv_out) io::write_coordinates_csv(outputs, *csv_out, placed.coords, placed.rows);
  if (json_out) {
    nlohmann::json worst = nlohmann::json::array();
    for (const FarPoint& f : r.summary.worst)
      worst.push_back({{"row", in.rows[f.row]}, {"ratio", f.ratio}});
    write_json_file(outputs, *json_out,
                    {{"map", placed.attributes["map"]},
                     {"input", placed.attributes["input"]},
                     {"parameters", placed.attributes["parameters"]},
                     {"placement",
                      {{"points", r.summary.points},
                       {"reference", r.summary.reference},
                       {"landmarks", r.summary.landmarks},
                       {"search", search_name(r.summary.search_used)},
                       {"typical_distance", r.summary.typical_distance},
                       {"far", r.summary.far},
                       {"worst", worst},
                       {"seconds", r.summary.seconds},
                       {"warnings", r.summary.warnings}}},
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
  cmd->add_option("-o,--out", a->output, "Placed map to write (HDF5)")->required();
  cmd->add_option("--csv", a->csv, "Also write the placed coordinates as CSV");
  cmd->add_option("--json", a->json, "Also write the placement summary as JSON");
  cmd->callback([&g, a] { run_place(g, *a); });
}

}  // namespace unfurl::app
