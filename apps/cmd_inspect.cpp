// `unfurl inspect FILE`: what a point file holds (every HDF5 dataset with its shape, type,
// storage, filters and attributes; the shape and type of a CSV/TSV/NPY file), then the point
// input a command would read from it, read whole and summarised per column; on a map written
// by unfurl, the map's record (what it holds, how and from what it was made) instead.
#include <fmt/core.h>

#include <memory>
#include <nlohmann/json.hpp>
#include <optional>

#include "apps/args.hpp"
#include "apps/command.hpp"
#include "apps/report.hpp"
#include "apps/run_info.hpp"
#include "apps/run_record.hpp"
#include "io/atomic_output.hpp"
#include "io/file_description.hpp"
#include "io/map_file.hpp"
#include "io/points_reader.hpp"

namespace unfurl::app {

namespace {

struct InspectArgs {
  PointInputArgs input;         // the same point-input options as every other command
  std::string json;             // file for the JSON document
  bool json_to_stdout = false;  // the old spelling: --json with no file (one release)
};

std::string shape_text(const std::vector<std::uint64_t>& shape) {
  if (shape.empty()) return "scalar";
  std::string out;
  for (std::size_t i = 0; i < shape.size(); ++i) out += (i ? " x " : "") + std::to_string(shape[i]);
  return out;
}

std::string storage_text(const io::ArrayDescription& a) {
  std::string out = a.storage;
  if (!a.chunk.empty()) out += " " + shape_text(a.chunk);
  for (std::size_t i = 0; i < a.filters.size(); ++i)
    out += (i ? ", " : ", filters ") + a.filters[i];
  return out;
}

void print_description(const GlobalOptions& g, const io::FileDescription& d) {
  say(g, fmt::format("file {}: {}, {} bytes, {}", d.file.string(), d.format, d.bytes, d.detail));
  for (const auto& a : d.root_attributes) say(g, fmt::format("  / @{} = {}", a.name, a.value));
  for (const auto& a : d.arrays) {
    say(g, fmt::format("  {}{} {}, {}{}", a.path.empty() ? "" : a.path + ": ", shape_text(a.shape),
                       a.type, storage_text(a), a.points_candidate ? "" : " (not points)"));
    for (const auto& attr : a.attributes)
      say(g, fmt::format("    @{} = {}", attr.name, attr.value));
  }
  if (!d.column_names.empty()) {
    std::string names;
    for (const auto& n : d.column_names) names += (names.empty() ? "" : ", ") + n;
    say(g, "  header: " + names);
  }
}

void print_points(const GlobalOptions& g, const io::PointReadResult& r, const io::RowRange& window,
                  const std::vector<io::ColumnStats>& stats) {
  say(g, fmt::format("points{}: {} rows x {} columns from rows {}:{} of the {} in the file, "
                     "stored as {}, read in {:.3f} s",
                     r.dataset.empty() ? "" : " " + r.dataset, r.points.rows, r.points.cols,
                     window.begin, window.end.value_or(r.file_rows), r.file_rows, r.source_type,
                     r.read_seconds));
  say(g, fmt::format("non-finite values: {} (rows dropped: {})", r.nonfinite_values,
                     r.dropped_rows.size()));
  say(g, fmt::format("{:>8} {:>16} {:>16} {:>16}", "column", "min", "max", "mean"));
  for (std::size_t j = 0; j < stats.size(); ++j)
    say(g, fmt::format("{:>8} {:>16.9g} {:>16.9g} {:>16.9g}", j, stats[j].min, stats[j].max,
                       stats[j].mean));
}

nlohmann::json to_json(const io::FileDescription& d) {
  using nlohmann::json;
  auto attributes = [](const std::vector<io::AttributeText>& list) {
    json out = json::object();
    for (const auto& a : list) out[a.name] = a.value;
    return out;
  };
  json arrays = json::array();
  for (const auto& a : d.arrays)
    arrays.push_back({{"path", a.path},
                      {"shape", a.shape},
                      {"type", a.type},
                      {"storage", a.storage},
                      {"chunk", a.chunk},
                      {"filters", a.filters},
                      {"attributes", attributes(a.attributes)},
                      {"points_candidate", a.points_candidate}});
  return {{"file", d.file.string()},
          {"format", d.format},
          {"bytes", d.bytes},
          {"detail", d.detail},
          {"attributes", attributes(d.root_attributes)},
          {"arrays", arrays},
          {"column_names", d.column_names}};
}

nlohmann::json points_json(const io::PointReadResult& r,
                           const std::vector<io::ColumnStats>& stats) {
  nlohmann::json columns = nlohmann::json::array();
  for (const auto& s : stats) columns.push_back({{"min", s.min}, {"max", s.max}, {"mean", s.mean}});
  return {{"dataset", r.dataset},
          {"rows", r.points.rows},
          {"cols", r.points.cols},
          {"file_rows", r.file_rows},
          {"first_row", r.rows.empty() ? 0 : r.rows.front()},
          {"source_type", r.source_type},
          {"nonfinite_values", r.nonfinite_values},
          {"dropped_rows", r.dropped_rows.size()},
          {"read_seconds", r.read_seconds},
          {"columns", columns}};
}

// The non-Euclidean ratio as the map's /spectrum records it: "not computed" (a run without
// scores) or a map from before the attribute existed say so, never 0.
std::string ratio_text(const nlohmann::json& spectrum) {
  const std::string method = spectrum.value("mass_method", std::string("not recorded"));
  if (!spectrum.contains("negative_ratio") || !spectrum["negative_ratio"].is_number())
    return method;
  const double ratio = spectrum["negative_ratio"].get<double>();
  if (method != "estimated") return fmt::format("{:.4f} ({})", ratio, method);
  return fmt::format("{:.4f} +- {:.4f} (estimated)", ratio,
                     spectrum.value("negative_ratio_standard_error", 0.0));
}

// The map's record: what it holds and the attributes that say how and from what it was made.
nlohmann::json map_record(const io::MapContents& m) {
  return {{"rows", m.coords.rows},
          {"dims", m.coords.cols},
          {"landmarks", m.landmark_rows.size()},
          {"eigenvalues", m.spectrum.size()},
          {"non_euclidean_ratio", ratio_text(m.spectrum_attributes)},
          {"landmark_geodesics", m.landmark_geodesic.has_value()},
          {"extras", m.extras.size()},
          {"attributes", m.attributes}};
}

std::string record_text(const nlohmann::json& value) {
  if (value.is_string()) return value.get<std::string>();
  if (!value.is_object()) return value.dump();
  std::string out;
  for (auto it = value.begin(); it != value.end(); ++it)
    out += (out.empty() ? "" : ", ") + it.key() + " " + record_text(it.value());
  return out;
}

void print_map_record(const GlobalOptions& g, const io::MapContents& m) {
  say(g, fmt::format("map: {} rows x {} dims, {} landmarks, {} eigenvalues{}, {} further datasets",
                     m.coords.rows, m.coords.cols, m.landmark_rows.size(), m.spectrum.size(),
                     m.landmark_geodesic ? ", landmark geodesics kept" : "", m.extras.size()));
  say(g, "  non-Euclidean ratio: " + ratio_text(m.spectrum_attributes));
  for (const char* key :
       {"command", "program_version", "creation_time", "seed", "seconds", "input", "parameters"})
    if (m.attributes.contains(key))
      say(g, fmt::format("  {}: {}", key, record_text(m.attributes[key])));
  if (m.attributes.contains("run") && m.attributes["run"].is_object()) {
    say(g, "  run record:");
    for (const std::string& line : run_record_lines(m.attributes["run"])) say(g, "    " + line);
  }
}

// Options that choose the points a command would read, which a map's record does not use.
void refuse_point_options_on_map(const CLI::App& cmd, const std::string& file) {
  for (const char* name : {"--rows", "--drop-nonfinite"})
    if (const CLI::Option* o = cmd.get_option_no_throw(name); o && o->count() > 0)
      throw OptionError(std::string(name) + ": not used on " + file +
                        ", a map: inspect shows its record (give --dataset to read one of its "
                        "datasets as points)");
}

}  // namespace

void add_inspect_command(CLI::App& app, GlobalOptions& g) {
  auto* cmd = app.add_subcommand(
      "inspect", "Describe a point file (HDF5, CSV/TSV, NPY) and check the points it holds");
  auto args = std::make_shared<InspectArgs>();
  add_point_input(cmd, args->input, "FILE");
  auto* json = cmd->add_option("--json", args->json, "Also write the description as JSON");
  // Before this release --json was a flag printing the JSON on stdout: still so, with a note,
  // when no file follows.
  json->expected(0, 1);
  cmd->callback([&g, args, cmd, json] {
    apply_globals(g);
    if (json->count() > 0 && args->json.empty()) {
      args->json_to_stdout = true;
      old_spelling_notice("inspect", "--json (no file)", "--json FILE");
    }
    io::OutputSet outputs(stop_token());
    outputs.add_input(args->input.file, "FILE");
    std::optional<std::size_t> json_out;
    if (!args->json.empty()) json_out = outputs.add(args->json, "--json");
    io::PointReadOptions options = to_read_options(args->input);
    options.stop = stop_token();
    const io::FileDescription description =
        io::describe_file(args->input.file, args->input.format, options.stop);
    const bool text = !args->json_to_stdout;
    // Text shows the description before reading, so it is there when the points are not.
    if (text) print_description(g, description);
    nlohmann::json document;
    if (args->input.dataset.empty() && io::is_map_file(args->input.file)) {
      refuse_point_options_on_map(*cmd, args->input.file);
      const io::MapContents m = io::read_map(args->input.file);
      if (text) print_map_record(g, m);
      document = to_json(description);
      document["map"] = map_record(m);
    } else {
      const io::PointReadResult result = io::read_points(args->input.file, options);
      const auto stats = io::column_stats(result.points, result.centres);
      if (text) print_points(g, result, options.rows.value_or(io::RowRange{}), stats);
      document = to_json(description);
      document["points"] = points_json(result, stats);
    }
    if (args->json_to_stdout) say(g, document.dump(2));
    if (json_out) {
      write_json_file(outputs, *json_out, document);
      outputs.commit();
    }
  });
}

}  // namespace unfurl::app
