// `unfurl embed INPUT -o MAP.h5`: the main job, from a point file (or a given graph: an edge
// list, a partial distance matrix, or a graph saved by `unfurl graph`) to a scored map file.
#include <fmt/core.h>

#include <memory>
#include <numeric>
#include <optional>

#include "apps/created_folder.hpp"
#include "apps/embed_job.hpp"
#include "apps/memory_guard.hpp"
#include "apps/option_scope.hpp"
#include "apps/run_info.hpp"
#include "apps/work_run.hpp"
#include "engine/graph_build.hpp"
#include "io/graph_file.hpp"
#include "io/graph_input.hpp"
#include "io/map_file.hpp"

namespace unfurl::app {
namespace {

JobInput read_points_input(const GlobalOptions& g, const EmbedArgs& a) {
  io::PointReadResult r = io::read_points(a.input.file, to_read_options(a.input));
  say(g,
      fmt::format("points: {} rows x {} columns from {}{} ({:.2f} s)", r.points.rows, r.points.cols,
                  a.input.file, r.dataset.empty() ? "" : ":" + r.dataset, r.read_seconds));
  if (!r.dropped_rows.empty())
    say(g, fmt::format("points: {} rows with non-finite values dropped", r.dropped_rows.size()));
  for (const auto& w : r.warnings) say(g, "warning: points: " + w);
  JobInput in;
  in.centres = std::move(r.centres);
  in.identity = point_input_identity(a.input.file, r);
  in.points = std::move(r.points);
  in.rows = std::move(r.rows);
  in.dropped_rows = std::move(r.dropped_rows);
  return in;
}

// --format for a graph input: its readers know csv (also tab-separated), hdf5 and npy.
io::GraphInputFormat graph_input_format(const std::string& format) {
  if (format == "hdf5") return io::GraphInputFormat::hdf5;
  if (format == "npy") return io::GraphInputFormat::npy;
  if (format == "csv" || format == "tsv") return io::GraphInputFormat::csv;
  return io::GraphInputFormat::automatic;
}

JobInput read_graph_input(const GlobalOptions& g, const EmbedArgs& a) {
  JobInput in;
  if (a.input_kind == "edges") {
    io::EdgeListOptions o;
    o.format = graph_input_format(a.input.format);
    o.table_dataset = a.input.dataset;  // one E x 3 dataset instead of /edges/{i,j,length}
    const io::EdgeList e = io::read_edge_list(a.input.file, o);
    in.graph = graph_from_edges(e.nodes, e.from, e.to, e.length);
    say(g, fmt::format("edges: {} nodes, {} edges from {}", e.nodes, e.from.size(), a.input.file));
  } else if (a.input_kind == "distances") {
    io::DistanceMatrixOptions o;
    o.format = graph_input_format(a.input.format);
    if (!a.input.dataset.empty()) o.dataset = a.input.dataset;
    if (!a.missing.empty()) {
      try {
        o.missing_value = std::stod(a.missing);
      } catch (const std::exception&) {
        throw OptionError("--missing: expected a number, got '" + a.missing + "'");
      }
    }
    const io::PartialDistances d = io::read_partial_distances(a.input.file, o);
    in.graph = graph_from_partial_distances(d.n, d.values);
    say(g, fmt::format("distances: {} x {} with {} missing pairs, completed by shortest paths", d.n,
                       d.n, d.missing_pairs));
  } else {
    io::GraphFile f = io::read_graph(a.input.file);
    in.graph = std::move(f.graph);
    in.rows = std::move(f.rows);
    say(g, fmt::format("graph: {} nodes from {}", in.graph->nodes(), a.input.file));
  }
  if (in.rows.empty()) {
    in.rows.resize(in.graph->nodes());
    std::iota(in.rows.begin(), in.rows.end(), std::int64_t{0});
  }
  in.identity = io::input_identity(a.input.file, a.input.dataset);
  return in;
}

}  // namespace

void add_embed_command(CLI::App& app, GlobalOptions& g) {
  auto* cmd = app.add_subcommand("embed", "Unfold points into a map that follows their geodesics");
  auto args = std::make_shared<EmbedArgs>();
  add_point_input(cmd, args->input, "INPUT");
  const auto kinds = CLI::IsMember({"points", "edges", "distances", "graph"});
  auto* kind = cmd->add_option("--input-kind", args->input_kind,
                               "What INPUT holds: points, an edge list (i, j, length), a distance "
                               "matrix with missing entries, or a graph saved by `unfurl graph`")
                   ->check(kinds)
                   ->capture_default_str();
  add_old_spelling(cmd, "--input", kind, args->input_kind)->check(kinds);
  cmd->add_option("--missing", args->missing,
                  "--input-kind distances: the value that marks a missing entry (NaN always "
                  "does)");
  cmd->add_option("-o,--out", args->output, "Map file to write (HDF5)")->required();
  auto plots_folder = std::make_shared<std::string>();
  cmd->add_option("--plots-dir", *plots_folder,
                  "Also write the run's figures (PNG) and report.html into this folder "
                  "(created when missing)");
  add_embed_job_options(cmd, *args);
  auto work = std::make_shared<WorkArgs>();
  add_work_options(cmd, *work);
  cmd->callback([&g, args, cmd, plots_folder, work] {
    apply_globals(g);
    RunShape shape = embed_run_shape(*args);
    if (args->input_kind != "points" && !args->input.dataset.empty())
      shape.input_format = io::detect_point_format(args->input.file, args->input.format);
    refuse_unused_options(*cmd, shape);
    // The memory guard before reading, when the file's metadata gives its shape.
    if (args->input_kind == "points")
      if (const auto size = point_file_shape(args->input))
        check_job_memory(g, *args, {.points = size->first, .columns = size->second});
    io::OutputSet outputs(stop_token());
    outputs.add_input(args->input.file, "input");
    JobOutputs where = add_job_outputs(outputs, *args);
    std::optional<CreatedFolder> folder;
    if (!plots_folder->empty()) {
      folder.emplace(*plots_folder, "--plots-dir");
      where.plots =
          add_run_plots(outputs, *plots_folder, !args->no_score && args->input_kind == "points");
    }
    JobInput in =
        args->input_kind == "points" ? read_points_input(g, *args) : read_graph_input(g, *args);
    // The work folder: steps saved as they complete, taken back by a rerun (--linear has none).
    std::optional<WorkRun> saved;
    if (!work->off && !args->linear) {
      saved.emplace(g, *work, *args, in.identity);
      in.saved_steps = &saved->store();
      in.resumed_from = &saved->resumed_from();
    }
    try {
      run_embed_job(g, *args, std::move(in), outputs, where);
    } catch (const InterruptedError&) {
      if (saved) saved->stopped();
      throw;
    } catch (...) {
      if (saved) saved->failed();
      throw;
    }
    if (folder) folder->keep();
    if (saved) saved->finish();
  });
}

}  // namespace unfurl::app
