// `unfurl inspect FILE`: what a point file holds (every HDF5 dataset with its shape, type,
// storage, filters and attributes; the shape and type of a CSV/TSV/NPY file), then the point
// input a command would read from it, read whole and summarised per column.
#include <fmt/core.h>

#include <memory>
#include <nlohmann/json.hpp>

#include "apps/args.hpp"
#include "apps/command.hpp"
#include "io/file_description.hpp"
#include "io/points_reader.hpp"

namespace unfurl::app {

namespace {

struct InspectArgs {
  PointInputArgs input;  // the same point-input options as every other command
  bool json = false;
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

nlohmann::json to_json(const io::FileDescription& d, const io::PointReadResult& r,
                       const std::vector<io::ColumnStats>& stats) {
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
  json columns = json::array();
  for (const auto& s : stats) columns.push_back({{"min", s.min}, {"max", s.max}, {"mean", s.mean}});
  return {{"file", d.file.string()},
          {"format", d.format},
          {"bytes", d.bytes},
          {"detail", d.detail},
          {"attributes", attributes(d.root_attributes)},
          {"arrays", arrays},
          {"column_names", d.column_names},
          {"points",
           {{"dataset", r.dataset},
            {"rows", r.points.rows},
            {"cols", r.points.cols},
            {"file_rows", r.file_rows},
            {"first_row", r.rows.empty() ? 0 : r.rows.front()},
            {"source_type", r.source_type},
            {"nonfinite_values", r.nonfinite_values},
            {"dropped_rows", r.dropped_rows.size()},
            {"read_seconds", r.read_seconds},
            {"columns", columns}}}};
}

}  // namespace

void add_inspect_command(CLI::App& app, GlobalOptions& g) {
  auto* cmd = app.add_subcommand(
      "inspect", "Describe a point file (HDF5, CSV/TSV, NPY) and check the points it holds");
  auto args = std::make_shared<InspectArgs>();
  add_point_input(cmd, args->input, "FILE");
  cmd->add_flag("--json", args->json, "Print one JSON document instead of text");
  cmd->callback([&g, args] {
    apply_globals(g);
    io::PointReadOptions options = to_read_options(args->input);
    options.stop = stop_token();
    const io::FileDescription description =
        io::describe_file(args->input.file, args->input.format, options.stop);
    // Text shows the description before reading, so it is there when the points are not.
    if (!args->json) print_description(g, description);
    const io::PointReadResult result = io::read_points(args->input.file, options);
    const auto stats = io::column_stats(result.points, result.centres);
    if (args->json)
      say(g, to_json(description, result, stats).dump(2));
    else
      print_points(g, result, options.rows.value_or(io::RowRange{}), stats);
  });
}

}  // namespace unfurl::app
