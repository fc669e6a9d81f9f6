// Command-line options shared by several commands, and their translation into the engine's
// and io's option structs. Values are checked twice on purpose: CLI11 rejects malformed
// text (exit 64), and each options struct's validate() rejects values that make no sense for
// the data at hand (also exit 64, naming the option).
#pragma once

#include <cstdint>
#include <initializer_list>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include <CLI/CLI.hpp>

#include "engine/assessment.hpp"
#include "engine/embedding.hpp"
#include "io/points_reader.hpp"

namespace unfurl::app {

// The point file every command starts from.
struct PointInputArgs {
  std::string file;
  std::string dataset;
  std::string rows;
  std::string format;
  bool drop_nonfinite = false;
};
// name: the positional's name ("POINTS"); empty: --points FILE instead of a positional.
void add_point_input(CLI::App* cmd, PointInputArgs& args, const std::string& name);
io::PointReadOptions to_read_options(const PointInputArgs& args);

// The neighbour graph and what to do when it falls apart.
struct GraphArgs {
  Neighbourhood neighbourhood = NearestK{};  // --k K or --radius R (not both)
  bool neighbourhood_given = false;          // either on the command line (else k adapts to N)
  bool mutual = false;
  std::string search = "automatic";
  bool keep_duplicates = false;
  std::string disconnected = "fail";
};
// with_components: also --disconnected (commands that embed); with_neighbourhood: --k and
// --radius as one value each (sweep reads them as lists of settings itself).
void add_graph_options(CLI::App* cmd, GraphArgs& args, bool with_components = true,
                       bool with_neighbourhood = true);
GraphOptions to_graph_options(const GraphArgs& args);
ComponentOptions to_component_options(const GraphArgs& args);
// The neighbourhood as map and graph files record it: {"k": K} or {"radius": R}, only the
// rule chosen (no sentinel for the other).
nlohmann::json neighbourhood_json(const Neighbourhood& neighbourhood);

// Landmarks and the spectral stage.
struct MapArgs {
  std::size_t dims = 2;
  LandmarkChoice landmarks = AutomaticLandmarks{};  // --landmarks COUNT|auto|all
  std::string pick = "maxmin";
  bool keep_geodesics = false;
  std::string node_order = "morton";
};
// one_map: also --dims (one count) and --keep-geodesics (sweep reads a dims range itself and
// keeps no geodesics).
void add_map_options(CLI::App* cmd, MapArgs& args, bool one_map = true);
void apply_map_options(const MapArgs& args, std::uint64_t seed, EmbedOptions& options);

// Quality scores.
struct ScoreArgs {
  std::vector<std::size_t> ks{12};
  bool ks_given = false;  // --score-k on the command line (else it adapts to N)
  std::string method = "automatic";
  std::size_t sample = 2000;
};
void add_score_options(CLI::App* cmd, ScoreArgs& args);
AssessOptions to_assess_options(const ScoreArgs& args, std::uint64_t seed);
// Defaults that depend on the number of points N (README "Small inputs"), applied unless the
// option was given: the graph's k becomes min(10, N - 1) (unless --k or --radius was given),
// the score k min(12, (N - 1) / 2).
void adapt_graph_k(const GraphArgs& args, std::size_t points, GraphOptions& options);
void adapt_score_k(const ScoreArgs& args, std::size_t points, AssessOptions& options);

// An old spelling of `current` kept for one release (README "Changes in this release"): it
// sets `target` as `current` does, is refused together with it, stays out of --help, and
// prints a one-line notice on stderr when used. Returns it for the validators `current` has.
void old_spelling_notice(const std::string& command, const std::string& old_name,
                         const std::string& current);
template <class T>
CLI::Option* add_old_spelling(CLI::App* cmd, const std::string& old_name, CLI::Option* current,
                              T& target) {
  CLI::Option* old = cmd->add_option(old_name, target)
                         ->each([old_name, current, command = cmd->get_name()](const std::string&) {
                           // Beside the new name it is refused: the refusal is then the one line.
                           if (current->count() == 0)
                             old_spelling_notice(command, old_name, current->get_name());
                         })
                         ->excludes(current)
                         ->group("");
  current->remove_excludes(old);  // one side is enough; --help of the new name stays clean
  return old;
}

// The value among `values` whose engine name (`name_of`, e.g. search_name) is `text`;
// `fallback` when none is (CLI11's IsMember checks have already limited the text).
template <class E, class NameOf>
E from_name(const std::string& text, std::initializer_list<E> values, NameOf name_of, E fallback) {
  for (E v : values)
    if (text == name_of(v)) return v;
  return fallback;
}

// "8G", "512M", "1.5G", "1000000" (units of 1024) -> bytes, from 1 to below 2^64; OptionError
// naming `option` and the text as typed otherwise.
std::uint64_t parse_bytes(const std::string& option, const std::string& text);
// The same check as a CLI11 validator, so a bad size is refused while parsing.
CLI::Validator byte_size();

// A CLI11 validator for a finite decimal number of 0 or more (NaN, infinities, negative
// numbers and values beyond double range refused as typed); positive: 0 refused as well.
CLI::Validator non_negative_number(bool positive = false);

// Every integer option goes through this CLI11 validator, as ->transform (it rewrites the text):
// decimal digits only, from `min` to `max`, refused as typed ("--k: expected a whole number from 0
// to ..., got '-1'"). CLI11 alone reads "-1" into an unsigned option as 2^64 - 1, "0x10" as 16 and
// "010" as octal 8.
CLI::Validator whole_number(std::uint64_t min, std::uint64_t max);

// Largest value of --seed: seeds are stored in the map as int64 attributes, so a run can be
// repeated from its map exactly.
inline constexpr std::uint64_t max_seed = INT64_MAX;
// Largest count an option can ask for (sizes beyond are refused by the stage's validate()).
inline constexpr std::uint64_t max_count = INT64_MAX;

}  // namespace unfurl::app
