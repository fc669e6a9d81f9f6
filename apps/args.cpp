#include "apps/args.hpp"

#include <cctype>
#include <cerrno>
#include <cmath>
#include <cstdlib>
#include <optional>

#include <fmt/core.h>

#include "apps/log.hpp"
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

void old_spelling_notice(const std::string& command, const std::string& old_name,
                         const std::string& current) {
  log_remark(fmt::format("{} {} is now {}; the old spelling goes in the next release", command,
                         old_name, current),
             false);
}

namespace {

// Each fills the one neighbourhood choice; CLI11 refuses the two together.
void add_neighbourhood_options(CLI::App* cmd, GraphArgs& a) {
  CLI::Option* k = cmd->add_option_function<std::size_t>(
                          "--k",
                          [&a](const std::size_t& k) {
                            a.neighbourhood = NearestK{k};
                            a.neighbourhood_given = true;
                          },
                          "Neighbours per point of the k-nearest graph")
                       ->transform(whole_number(0, max_count))
                       ->default_str(std::to_string(NearestK{}.k));
  cmd->add_option_function<double>(
         "--radius",
         [&a](const double& r) {
           a.neighbourhood = WithinRadius{r};
           a.neighbourhood_given = true;
         },
         "Join points closer than or at this Euclidean distance instead (data units)")
      ->check(non_negative_number(true))
      ->excludes(k);
}

}  // namespace

void add_graph_options(CLI::App* cmd, GraphArgs& a, bool with_components, bool with_neighbourhood) {
  if (with_neighbourhood) add_neighbourhood_options(cmd, a);
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
  o.neighbourhood = a.neighbourhood;
  o.mutual = a.mutual;
  o.search = from_name(a.search, {Search::automatic, Search::tree, Search::scan}, search_name,
                       Search::automatic);
  o.keep_duplicates = a.keep_duplicates;
  return o;
}

nlohmann::json neighbourhood_json(const Neighbourhood& n) {
  if (const auto* within = std::get_if<WithinRadius>(&n)) return {{"radius", within->radius}};
  return {{"k", std::get<NearestK>(n).k}};
}

ComponentOptions to_component_options(const GraphArgs& a) {
  ComponentOptions o;
  o.policy = from_name(a.disconnected,
                       {ComponentPolicy::fail, ComponentPolicy::largest, ComponentPolicy::bridge},
                       component_policy_name, ComponentPolicy::fail);
  return o;
}

namespace {

// --landmarks text: a positive count, "auto" or "all"; nothing when it is none of these.
std::optional<LandmarkChoice> landmark_choice(const std::string& text) {
  if (text == "auto") return AutomaticLandmarks{};
  if (text == "all") return AllLandmarks{};
  if (text.empty() || text.size() > 19 || text.find_first_not_of("0123456789") != text.npos)
    return std::nullopt;
  const std::size_t count = std::stoull(text);
  if (count == 0) return std::nullopt;
  return LandmarkCount{count};
}

}  // namespace

void add_map_options(CLI::App* cmd, MapArgs& a, bool one_map) {
  if (one_map)
    cmd->add_option("--dims", a.dims, "Dimensions of the map")
        ->transform(whole_number(0, max_count))
        ->capture_default_str();
  cmd->add_option_function<std::string>(
         "--landmarks", [&a](const std::string& text) { a.landmarks = *landmark_choice(text); },
         "Landmark count, 'auto' (min(N, max(dims + 1, 128))) or 'all' (exact mode: "
         "N x N geodesics)")
      ->check(CLI::Validator(
          [](std::string& text) {
            return landmark_choice(text)
                       ? std::string()
                       : "expected a positive count, 'auto' or 'all', got '" + text + "'";
          },
          "COUNT|auto|all"))
      ->default_str("auto");
  cmd->add_option("--pick", a.pick, "How landmarks are chosen")
      ->check(CLI::IsMember({"maxmin", "random"}))
      ->capture_default_str();
  if (one_map)
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
  o.landmarks.count = a.landmarks;
  o.landmarks.seed = seed;
  o.landmarks.pick = a.pick == "random" ? Pick::random : Pick::maxmin;
  o.keep_geodesics = a.keep_geodesics;
  o.order = a.node_order == "input"         ? NodeOrder::input
            : a.node_order == "bfs"         ? NodeOrder::bfs
            : a.node_order == "tree-leaves" ? NodeOrder::tree_leaves
                                            : NodeOrder::morton;
  if (a.dims < 1) throw OptionError("--dims: must be at least 1, got 0");
}

void add_score_options(CLI::App* cmd, ScoreArgs& a) {
  cmd->add_option("--score-k", a.ks, "Neighbourhood sizes for trustworthiness and continuity")
      ->transform(whole_number(0, max_count))
      ->each([&a](const std::string&) { a.ks_given = true; })
      ->default_str("12 (fewer below 25 points)");
  cmd->add_option("--score-method", a.method,
                  "exact (every point), sampled, or automatic (exact up to 50,000 points)")
      ->check(CLI::IsMember({"automatic", "exact", "sampled"}))
      ->capture_default_str();
  cmd->add_option("--sample", a.sample, "Query points when scores are sampled")
      ->transform(whole_number(0, max_count))
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
  if (!a.neighbourhood_given && points >= 2)
    o.neighbourhood = NearestK{std::min(NearestK{}.k, points - 1)};
}

void adapt_score_k(const ScoreArgs& a, std::size_t points, AssessOptions& o) {
  if (!a.ks_given && points >= 3) o.neighbourhoods.ks = {default_score_k(points)};
}

namespace {

// "8G" -> bytes; nothing when the text is not a size or is 2^64 bytes or more.
std::optional<std::uint64_t> bytes_of(const std::string& text) {
  std::size_t used = 0;
  double value = 0;
  try {
    value = std::stod(text, &used);
  } catch (const std::exception&) {
    return std::nullopt;
  }
  // stod also reads blanks, hexadecimal, "inf" and "nan": a size is written in decimal.
  if (used == 0 || !(std::isdigit(static_cast<unsigned char>(text[0])) || text[0] == '.') ||
      text.find_first_of("xXpP") < used)
    return std::nullopt;
  const std::string unit = text.substr(used);
  double scale = 0;
  if (unit == "" || unit == "B") scale = 1;
  if (unit == "K" || unit == "KiB") scale = 0x1p10;
  if (unit == "M" || unit == "MiB") scale = 0x1p20;
  if (unit == "G" || unit == "GiB") scale = 0x1p30;
  if (unit == "T" || unit == "TiB") scale = 0x1p40;
  const double bytes = value * scale;
  if (scale == 0 || !std::isfinite(bytes) || bytes < 1 || bytes >= 0x1p64) return std::nullopt;
  return static_cast<std::uint64_t>(bytes);
}

std::string size_expected(const std::string& text) {
  return "expected a size from 1 byte to below 16 EiB, such as 8G, 512M or 1000000, got '" + text +
         "'";
}

}  // namespace

std::uint64_t parse_bytes(const std::string& option, const std::string& text) {
  if (const auto bytes = bytes_of(text)) return *bytes;
  throw OptionError(option + ": " + size_expected(text));
}

CLI::Validator byte_size() {
  return CLI::Validator(
      [](std::string& text) { return bytes_of(text) ? std::string() : size_expected(text); },
      "SIZE");
}

CLI::Validator non_negative_number(bool positive) {
  return CLI::Validator(
      [positive](std::string& text) {
        const char* begin = text.c_str();
        char* end = nullptr;
        errno = 0;
        const double value = std::strtod(begin, &end);
        // strtod also reads blanks and hexadecimal; a number here is written in decimal.
        const bool decimal = !text.empty() && (std::isdigit(static_cast<unsigned char>(text[0])) ||
                                               text[0] == '.' || text[0] == '+');
        const bool hex = text.find_first_of("xX") != std::string::npos;
        if (!decimal || hex || end != begin + text.size() || errno == ERANGE ||
            !std::isfinite(value) || value < 0 || (positive && value == 0))
          return std::string(positive ? "expected a positive finite number"
                                      : "expected a finite number of 0 or more") +
                 ", got '" + text + "'";
        return std::string();
      },
      positive ? "NUMBER > 0" : "NUMBER >= 0");
}

CLI::Validator whole_number(std::uint64_t min, std::uint64_t max) {
  return CLI::Validator(
      [min, max](std::string& text) {
        const std::string expected =
            fmt::format("expected a whole number from {} to {}, got '{}'", min, max, text);
        if (text.empty() || text.size() > 40) return expected;
        std::uint64_t value = 0;
        for (const char c : text) {
          if (c < '0' || c > '9') return expected;
          const std::uint64_t digit = static_cast<std::uint64_t>(c - '0');
          if (value > (UINT64_MAX - digit) / 10) return expected;  // would overflow
          value = value * 10 + digit;
        }
        if (value < min || value > max) return expected;
        text = std::to_string(value);  // CLI11 reads "010" as octal: pass it on as "10"
        return std::string();
      },
      max == max_count ? fmt::format("INT >= {}", min) : fmt::format("INT {}..{}", min, max));
}

}  // namespace unfurl::app
