#include "apps/option_scope.hpp"

#include <algorithm>
#include <functional>
#include <vector>

#include "engine/error.hpp"

namespace unfurl::app {
namespace {

// Options with no effect in one situation of a run. `situation` returns how the user asked
// for that situation ("--input-kind edges"), or "" when the run is not in it.
struct Rule {
  std::function<std::string(const RunShape&)> situation;
  std::vector<std::string> options;
  std::string why;
  std::vector<std::string> values = {};  // refused only with one of these values; empty: any
};

std::string when(bool active, const std::string& text) {
  return active ? text : std::string();
}

const std::vector<Rule>& rules() {
  const auto given_graph = [](const RunShape& s) {
    return when(s.input_kind != "points", "--input-kind " + s.input_kind);
  };
  static const std::vector<Rule> table = {
      {given_graph,
       {"--rows", "--drop-nonfinite"},
       "a given graph is used whole; rows are chosen and dropped in point files only"},
      {given_graph,
       {"--k", "--radius", "--mutual", "--search", "--keep-duplicates"},
       "the file gives the graph, so no neighbour search runs"},
      {given_graph,
       {"--scale", "--metric", "--pre-pca", "--linear"},
       "these transform points, and a given graph has none"},
      {given_graph,
       {"--node-order"},
       "morton and tree-leaves order nodes by their points, and a given graph has none",
       {"morton", "tree-leaves"}},
      {given_graph,
       {"--score-k", "--score-method", "--sample"},
       "trustworthiness and continuity need points; a given graph gets the residual variance "
       "only"},
      {[](const RunShape& s) { return when(s.input_kind == "graph", "--input-kind graph"); },
       {"--dataset", "--format"},
       "a graph saved by `unfurl graph` is read from its own HDF5 layout"},
      {[](const RunShape& s) {
         return when(s.input_kind != "distances", "--input-kind " + s.input_kind);
       },
       {"--missing"},
       "it marks the missing entries of --input-kind distances only"},
      {[](const RunShape& s) {
         return when(!s.input_format.empty() && s.input_format != "hdf5",
                     "a " + s.input_format + " input file");
       },
       {"--dataset"},
       "only HDF5 files hold named datasets"},
      {[](const RunShape& s) {
         return when(!s.map_format.empty() && s.map_format != "hdf5",
                     "a " + s.map_format + " map file");
       },
       {"--map-dataset"},
       "only HDF5 files hold named datasets"},
      {[](const RunShape& s) { return when(s.linear, "--linear"); },
       {"--k", "--radius", "--mutual", "--search", "--keep-duplicates", "--disconnected",
        "--landmarks", "--pick", "--keep-geodesics", "--node-order", "--work-dir", "--no-work-dir",
        "--keep-work-dir", "--hash-whole-input"},
       "plain PCA builds no graph and picks no landmarks (and saves no steps to resume)"},
      {[](const RunShape& s) { return when(s.exact, "--landmarks all"); },
       {"--pick"},
       "every node is a source, none is picked"},
      {[](const RunShape& s) { return when(s.no_score, "--no-score"); },
       {"--score-k", "--score-method", "--sample"},
       "no scores are computed"},
      {[](const RunShape& s) { return when(s.score_exact, "--score-method exact"); },
       {"--sample"},
       "every point is a query, none is sampled"},
      {[](const RunShape& s) { return when(s.demo, "unfurl demo"); },
       {"--json"},
       "the demo writes its report into the --out-dir folder"},
      {[](const RunShape& s) { return when(s.data_only, "--data-only"); },
       {"--k",
        "--radius",
        "--mutual",
        "--search",
        "--keep-duplicates",
        "--disconnected",
        "--scale",
        "--metric",
        "--pre-pca",
        "--dims",
        "--landmarks",
        "--pick",
        "--keep-geodesics",
        "--node-order",
        "--linear",
        "--score-k",
        "--score-method",
        "--sample",
        "--no-score",
        "--csv"},
       "only the scenario's point file is written, nothing is embedded"},
  };
  return table;
}

// "--k 5", "--score-k 5 -1", or "--mutual" for a flag: the option as given (whole numbers
// after whole_number(), which drops leading zeros).
std::string as_typed(const CLI::Option& option, const std::string& name) {
  std::string text = name;
  if (option.get_expected_max() == 0) return text;  // a flag
  for (const std::string& value : option.results()) text += " " + value;
  return text;
}

}  // namespace

RunShape embed_run_shape(const EmbedArgs& a) {
  RunShape s;
  s.input_kind = a.input_kind;
  s.linear = a.linear;
  s.exact = std::holds_alternative<AllLandmarks>(a.map.landmarks);
  s.no_score = a.no_score;
  s.score_exact = a.score.method == "exact";
  return s;
}

void refuse_unused_options(const CLI::App& cmd, const RunShape& shape) {
  for (const Rule& rule : rules()) {
    const std::string situation = rule.situation(shape);
    if (situation.empty()) continue;
    for (const std::string& name : rule.options) {
      const CLI::Option* option = cmd.get_option_no_throw(name);
      if (option == nullptr || option->count() == 0) continue;
      const auto& given = option->results();
      if (!rule.values.empty() &&
          std::find(rule.values.begin(), rule.values.end(), given.back()) == rule.values.end())
        continue;
      throw OptionError(as_typed(*option, name) + ": not used with " + situation + ": " + rule.why);
    }
  }
}

bool option_used(const RunShape& shape, const std::string& option) {
  for (const Rule& rule : rules())
    if (!rule.situation(shape).empty() && rule.values.empty())
      for (const std::string& name : rule.options)
        if (name == option) return false;
  return true;
}

nlohmann::json without_unused(const RunShape& shape, nlohmann::json parameters) {
  for (auto it = parameters.begin(); it != parameters.end();) {
    std::string option = "--" + it.key();
    std::replace(option.begin(), option.end(), '_', '-');
    it = option_used(shape, option) ? std::next(it) : parameters.erase(it);
  }
  return parameters;
}

}  // namespace unfurl::app
