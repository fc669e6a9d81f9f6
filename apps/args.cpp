#include "apps/args.hpp"

#include <cmath>

#include <fmt/core.h>

#include "engine/error.hpp"

namespace unfurl::app {

void add_point_input(CLI::App* cmd, PointInputArgs& a, const std::string& name) {
  if (name.empty())
    cmd->add_option("--points", a.file, "Point file (HDF5, CSV/TSV or NPY)")->required();
  else
    cmd->add_option(name, a.file, "Point file (HDF5, CSV/TSV or NPY)")->required();
  cmd->add_option("--dataset", a.dataset,
                  "HDF5 dataset of points (default: the file's only 2-D numeric dataset)");
  cmd->add_option("--rows", a.rows, "Read only rows A:B (half-open, 0-based)");
  cmd->add_option("--format", a.format, "Force the input format instead of detecting it")
      ->check(CLI::IsMember({"hdf5", "csv", "tsv", "npy"}));
  cmd->add_flag("--drop-nonfinite", a.drop_nonfinite,
                "Drop rows holding NaN or infinite values (listed in the output) instead of "
                "failing");
}

io::PointReadOptions to_read_options(const PointInputArgs& a) {
  io::PointReadOptions o;
  o.dataset = a.dataset;
  if (!a.rows.empty()) o.rows = io::parse_row_range(a.rows);
  o.drop_nonfinite = a.drop_nonfinite;
  o.format = a.format;
  o.validate();
  return o;
}

void add_graph_options(CLI::App* cmd, GraphArgs& a, bool with_components) {
  // Whether --k and --radius were given is recorded: 0 or a negative radius must be refused,
  // not read as "no radius", and --k beside --radius must not be dropped silently.
  cmd->add_option_function<std::size_t>(
         "--k",
         [&a](const std::size_t& k) {
           a.k = k;
           a.k_given = true;
         },
         "Neighbours per point of the k-nearest graph")
      ->default_str(std::to_string(a.k));
  cmd->add_option_function<double>(
      "--radius",
      [&a](const double& r) {
        a.radius = r;
        a.radius_given = true;
      },
      "Join points closer than or at this Euclidean distance instead (data units)");
  cmd->add_flag("--mutual", a.mutual, "Keep an edge only when both points list each other");
  cmd->add_option("--search", a.search, "Exact search back end")
      ->check(CLI::IsMember({"automatic", "tree", "scan"}))
      ->capture_default_str();
  cmd->add_flag("--keep-duplicates", a.keep_duplicates,
                "Keep identical rows as separate nodes joined by tiny edges (default: merge)");
  if (!with_components) return;
  cmd->add_option("--disconnected", a.disconnected,
                  "Graph in several pieces: fail, keep the largest, or bridge them by the "
                  "shortest edges between them")
      ->check(CLI::IsMember({"fail", "largest", "bridge"}))
      ->capture_default_str();
}

GraphOptions to_graph_options(const GraphArgs& a) {
  GraphOptions o;
  if (a.radius_given) {
    if (!(a.radius > 0) || !std::isfinite(a.radius))
      throw OptionError("--radius: must be a positive finite number, got " +
                        fmt::format("{}", a.radius));
    o.radius = a.radius;
    o.k = a.k_given ? a.k : 0;  // both given: GraphOptions::validate refuses the pair
  } else {
    o.radius = 0;
    o.k = a.k;
  }
  o.mutual = a.mutual;
  o.search = from_name(a.search, {Search::automatic, Search::tree, Search::scan}, search_name,
                       Search::automatic);
  o.keep_duplicates = a.keep_duplicates;
  return o;
}

ComponentOptions to_component_options(const GraphArgs& a) {
  ComponentOptions o;
  o.policy = from_name(a.disconnected,
                       {ComponentPolicy::fail, ComponentPolicy::largest, ComponentPolicy::bridge},
                       component_policy_name, ComponentPolicy::fail);
  return o;
}

void add_map_options(CLI::App* cmd, MapArgs& a) {
  cmd->add_option("--dims", a.dims, "Dimensions of the map")->capture_default_str();
  cmd->add_option("--landmarks", a.landmarks,
                  "Landmark count, 'auto' (min(N, max(dims + 1, 256))) or 'all' (exact mode: "
                  "N x N geodesics)")
      ->capture_default_str();
  cmd->add_option("--pick", a.pick, "How landmarks are chosen")
      ->check(CLI::IsMember({"maxmin", "random"}))
      ->capture_default_str();
  cmd->add_flag("--keep-geodesics", a.keep_geodesics,
                "Store the landmark geodesic rows (L x N float32) in the map");
  cmd->add_option("--node-order", a.node_order,
                  "Node numbering for the shortest-path stage, for memory locality (it also "
                  "decides which node the seed makes the first landmark)")
      ->check(CLI::IsMember({"input", "bfs", "morton", "tree-leaves"}))
      ->capture_default_str();
}

void apply_map_options(const MapArgs& a, std::uint64_t seed, EmbedOptions& o) {
  o.spectral.dims = a.dims;
  o.landmarks.dims = a.dims;
  o.landmarks.seed = seed;
  o.landmarks.pick = a.pick == "random" ? Pick::random : Pick::maxmin;
  o.keep_geodesics = a.keep_geodesics;
  o.exact = a.landmarks == "all";
  o.order = a.node_order == "input"         ? NodeOrder::input
            : a.node_order == "bfs"         ? NodeOrder::bfs
            : a.node_order == "tree-leaves" ? NodeOrder::tree_leaves
                                            : NodeOrder::morton;
  o.landmarks.count = 0;
  if (a.landmarks != "all" && a.landmarks != "auto") {
    std::size_t used = 0;
    unsigned long long count = 0;
    try {
      count = std::stoull(a.landmarks, &used);
    } catch (const std::exception&) {
      used = 0;
    }
    if (used != a.landmarks.size() || a.landmarks[0] == '-' || count == 0)
      throw OptionError("--landmarks: expected a positive count, 'auto' or 'all', got '" +
                        a.landmarks + "'");
    o.landmarks.count = count;
  }
  if (a.dims < 1) throw OptionError("--dims: must be at least 1, got 0");
}

void add_score_options(CLI::App* cmd, ScoreArgs& a) {
  cmd->add_option_function<std::vector<std::size_t>>(
         "--score-k",
         [&a](const std::vector<std::size_t>& ks) {
           a.ks = ks;
           a.ks_given = true;
         },
         "Neighbourhood sizes for trustworthiness and continuity")
      ->default_str("12 (fewer below 25 points)");
  cmd->add_option("--score-method", a.method,
                  "exact (every point), sampled, or automatic (exact up to 50,000 points)")
      ->check(CLI::IsMember({"automatic", "exact", "sampled"}))
      ->capture_default_str();
  cmd->add_option("--sample", a.sample, "Query points when scores are sampled")
      ->capture_default_str();
}

AssessOptions to_assess_options(const ScoreArgs& a, std::uint64_t seed) {
  AssessOptions o;
  o.neighbourhoods.ks = a.ks;
  o.neighbourhoods.method =
      from_name(a.method, {ScoreMethod::automatic, ScoreMethod::exact, ScoreMethod::sampled},
                score_method_name, ScoreMethod::automatic);
  o.neighbourhoods.sample = a.sample;
  o.neighbourhoods.seed = seed;
  return o;
}

void adapt_graph_k(const GraphArgs& a, std::size_t points, GraphOptions& o) {
  if (!a.k_given && !a.radius_given && points >= 2) o.k = std::min(a.k, points - 1);
}

void adapt_score_k(const ScoreArgs& a, std::size_t points, AssessOptions& o) {
  if (!a.ks_given && points >= 3) o.neighbourhoods.ks = {default_score_k(points)};
}

void validate_score_options(const AssessOptions& o, std::size_t points) {
  try {
    o.validate(points);
  } catch (const OptionError& e) {
    // The engine names its field --k; on the command line it is --score-k.
    const std::string message = e.what();
    if (message.rfind("--k:", 0) == 0) throw OptionError("--score-k:" + message.substr(4));
    throw;
  }
}

std::uint64_t parse_bytes(const std::string& option, const std::string& text) {
  std::size_t used = 0;
  double value = 0;
  try {
    value = std::stod(text, &used);
  } catch (const std::exception&) {
    used = 0;
  }
  double scale = 1;
  const std::string unit = used == 0 ? std::string() : text.substr(used);
  if (unit == "" || unit == "B")
    scale = 1;
  else if (unit == "K" || unit == "KiB")
    scale = 1024.0;
  else if (unit == "M" || unit == "MiB")
    scale = 1024.0 * 1024;
  else if (unit == "G" || unit == "GiB")
    scale = 1024.0 * 1024 * 1024;
  else if (unit == "T" || unit == "TiB")
    scale = 1024.0 * 1024 * 1024 * 1024;
  else
    used = 0;
  if (used == 0 || !std::isfinite(value) || value <= 0)
    throw OptionError(option + ": expected a size such as 8G, 512M or 1000000, got '" + text + "'");
  return static_cast<std::uint64_t>(value * scale);
}

}  // namespace unfurl::app
