// `unfurl graph POINTS -o GRAPH.h5`: builds the neighbour graph alone, prints its summary
// (size, degrees, edge lengths, duplicates, components) and saves it so that `unfurl embed
// --input-kind graph` can start from it.
#include <fmt/core.h>

#include <algorithm>
#include <memory>
#include <optional>

#include "apps/args.hpp"
#include "apps/command.hpp"
#include "apps/report.hpp"
#include "engine/components.hpp"
#include "engine/neighbours.hpp"
#include "io/atomic_output.hpp"
#include "io/graph_file.hpp"
#include "io/map_file.hpp"

namespace unfurl::app {
namespace {

struct GraphCommandArgs {
  PointInputArgs input;
  GraphArgs graph;
  std::string output;
  std::string json;
};

void run_graph(const GlobalOptions& g, const GraphCommandArgs& a) {
  apply_globals(g);
  io::OutputSet outputs(stop_token());  // every output checked before any work
  outputs.add_input(a.input.file, "input");
  const std::size_t graph_out = outputs.add(a.output, "-o");
  std::optional<std::size_t> json_out;
  if (!a.json.empty()) json_out = outputs.add(a.json, "--json");
  GraphOptions options = to_graph_options(a.graph);
  const io::PointReadResult in = io::read_points(a.input.file, to_read_options(a.input));
  adapt_graph_k(a.graph, in.points.rows, options);
  say(g, fmt::format("points: {} rows x {} columns", in.points.rows, in.points.cols));
  for (const auto& w : in.warnings) say(g, "warning: points: " + w);

  const GraphResult built = build_neighbour_graph(in.points, options, stop_token());
  print_graph(g, built.summary);
  for (const auto& w : built.summary.warnings) say(g, "warning: graph: " + w);
  const ComponentLabels parts = connected_components(built.graph);
  std::vector<std::size_t> sizes = parts.size;
  std::sort(sizes.rbegin(), sizes.rend());
  say(g, parts.count == 1 ? std::string("components: 1 (connected)")
                          : fmt::format("components: {}, largest {} nodes, smallest {}",
                                        parts.count, sizes.front(), sizes.back()));

  nlohmann::json summary = graph_json(built.summary);
  summary["components"] = parts.count;
  summary["component_sizes_top"] = std::vector<std::size_t>(
      sizes.begin(), sizes.begin() + std::min<std::size_t>(10, sizes.size()));
  nlohmann::json parameters = {{"mutual", options.mutual},
                               {"search", a.graph.search},
                               {"keep_duplicates", options.keep_duplicates},
                               {"rows", a.input.rows}};
  parameters.update(neighbourhood_json(options.neighbourhood));
  const nlohmann::json attributes = {{"input", io::input_identity(a.input.file, in.dataset)},
                                     {"parameters", parameters},
                                     {"summary", summary}};
  std::vector<std::int64_t> rows;
  rows.reserve(built.point_of_node.size());
  for (std::size_t p : built.point_of_node) rows.push_back(in.rows[p]);
  io::write_graph(outputs, graph_out, built.graph, attributes, rows);
  if (json_out) write_json_file(outputs, *json_out, attributes);
  outputs.commit();
  say(g, "wrote " + a.output);
}

}  // namespace

void add_graph_command(CLI::App& app, GlobalOptions& g) {
  auto* cmd = app.add_subcommand("graph", "Build and save the neighbour graph of a point file");
  auto a = std::make_shared<GraphCommandArgs>();
  add_point_input(cmd, a->input, "POINTS");
  cmd->add_option("-o,--out", a->output, "Graph file to write (HDF5)")->required();
  add_graph_options(cmd, a->graph, false);
  cmd->add_option("--json", a->json, "Also write the summary as JSON");
  cmd->callback([&g, a] { run_graph(g, *a); });
}

}  // namespace unfurl::app
