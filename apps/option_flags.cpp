#include "apps/option_flags.hpp"

#include <algorithm>
#include <array>
#include <cctype>
#include <string_view>

namespace unfurl::app {
namespace {

struct FieldFlag {
  std::string_view field;     // "StructName.field", as engine/ and io/ throw it
  std::string_view commands;  // the commands where `flag` applies, blank-separated; "": all
  std::string_view flag;      // "": no flag (set by the program, never typed)
};

// Rows for one field are tried in order: a row for the command in use before the row for all.
constexpr std::array kTable{
    // engine/: the neighbour graph and its components
    FieldFlag{"NearestK.k", "", "--k"},
    FieldFlag{"WithinRadius.radius", "", "--radius"},
    FieldFlag{"GraphOptions.mutual", "", "--mutual"},
    FieldFlag{"GraphOptions.search", "", "--search"},
    FieldFlag{"GraphOptions.keep_duplicates", "", "--keep-duplicates"},
    FieldFlag{"GraphOptions.block_rows", "", ""},
    FieldFlag{"GraphOptions.duplicate_epsilon", "", ""},
    FieldFlag{"KnnOptions.k", "", ""},
    FieldFlag{"KnnOptions.block_rows", "", ""},
    FieldFlag{"ComponentOptions.policy", "", "--disconnected"},
    FieldFlag{"ComponentOptions.sizes_in_message", "", ""},
    // engine/: preprocessing, landmarks, geodesics, the spectrum, the embedding
    FieldFlag{"PreprocessOptions.scale", "", "--scale"},
    FieldFlag{"PreprocessOptions.metric", "", "--metric"},
    FieldFlag{"PreprocessOptions.pca", "", "--pre-pca"},
    FieldFlag{"LandmarkOptions.count", "", "--landmarks"},
    FieldFlag{"LandmarkOptions.pick", "", "--pick"},
    FieldFlag{"GeodesicOptions.sources", "", ""},
    FieldFlag{"SpectralOptions.dims", "", "--dims"},
    FieldFlag{"SpectralOptions.krylov", "", ""},
    FieldFlag{"SpectralOptions.max_iterations", "", ""},
    FieldFlag{"SpectralOptions.tolerance", "", ""},
    FieldFlag{"SpectralOptions.negative_end", "", "--no-score"},
    FieldFlag{"SpectralOptions.mass", "", "--no-score"},
    FieldFlag{"SpectralOptions.probes", "", ""},
    FieldFlag{"SpectralOptions.quadrature", "", ""},
    FieldFlag{"LinearOptions.dims", "", "--dims"},
    FieldFlag{"EmbedOptions.order", "", "--node-order"},
    FieldFlag{"EmbedOptions.keep_geodesics", "", "--keep-geodesics"},
    FieldFlag{"MemoryShape.points", "", ""},
    FieldFlag{"MemoryShape.threads", "", "--threads"},
    FieldFlag{"ShortCircuitOptions.length_factor", "", ""},
    FieldFlag{"ShortCircuitOptions.detour_factor", "", ""},
    FieldFlag{"ShortCircuitOptions.max_settled", "", ""},
    // engine/: the scores (the neighbourhood sizes are --score-k: --k is the graph's)
    FieldFlag{"QualityOptions.ks", "", "--score-k"},
    FieldFlag{"QualityOptions.method", "", "--score-method"},
    FieldFlag{"QualityOptions.sample", "", "--sample"},
    FieldFlag{"QualityOptions.threads", "", "--threads"},
    FieldFlag{"QualityOptions.exact_limit", "", ""},
    // embed and demo take the intrinsic dimension's k from the graph's --k; score has its own
    FieldFlag{"DimensionOptions.k", "embed demo", "--k"},
    FieldFlag{"DimensionOptions.k", "", "--dimension-k"},
    FieldFlag{"AssessOptions.residual_pairs", "", ""},
    FieldFlag{"PairSampleOptions.count", "", ""},
    FieldFlag{"ResidualOptions.sources", "", ""},
    FieldFlag{"ResidualOptions.min_sources", "", ""},
    // engine/: placing new points (place)
    FieldFlag{"PlaceOptions.k", "", "--k"},
    FieldFlag{"PlaceOptions.search", "", "--search"},
    FieldFlag{"PlaceOptions.far_ratio", "", "--far-ratio"},
    FieldFlag{"PlaceOptions.block_rows", "", "--block-rows"},
    FieldFlag{"PlaceOptions.worst", "", ""},
    FieldFlag{"PlaceOptions.typical_sample", "", ""},
    FieldFlag{"PlaceOptions.typical_distance", "", ""},
    // engine/: the neighbourhood sweep (sweep)
    FieldFlag{"SweepOptions.dims_low", "", "--dims"},
    FieldFlag{"SweepOptions.dims_high", "", "--dims"},
    FieldFlag{"SweepOptions.score_dims", "", "--score-dims"},
    FieldFlag{"SweepOptions.jump_rise", "", ""},
    FieldFlag{"SweepOptions.trust_drop", "", ""},
    FieldFlag{"SweepOptions.near_best", "", ""},
    // io/: point files
    FieldFlag{"PointReadOptions.dataset", "", "--dataset"},
    FieldFlag{"PointReadOptions.rows", "", "--rows"},
    FieldFlag{"PointReadOptions.format", "", "--format"},
    FieldFlag{"PointReadOptions.drop_nonfinite", "", "--drop-nonfinite"},
    // io/: given graphs (embed --input-kind edges | distances)
    FieldFlag{"EdgeListOptions.format", "", "--format"},
    FieldFlag{"EdgeListOptions.table_dataset", "", "--dataset"},
    FieldFlag{"EdgeListOptions.i_dataset", "", ""},
    FieldFlag{"EdgeListOptions.j_dataset", "", ""},
    FieldFlag{"EdgeListOptions.length_dataset", "", ""},
    FieldFlag{"EdgeListOptions.nodes", "", ""},
    FieldFlag{"DistanceMatrixOptions.format", "", "--format"},
    FieldFlag{"DistanceMatrixOptions.dataset", "", "--dataset"},
    FieldFlag{"DistanceMatrixOptions.missing_value", "", "--missing"},
    FieldFlag{"DistanceMatrixOptions.symmetry_tolerance", "", ""},
    // io/plot: figures (plot)
    FieldFlag{"FigureSize.width", "", "--size"},
    FieldFlag{"FigureSize.height", "", "--size"},
    FieldFlag{"MapFigure.axis_x", "", "--axes"},
    FieldFlag{"MapFigure.axis_y", "", "--axes"},
};

bool applies(std::string_view commands, const std::string& command) {
  if (commands.empty()) return true;
  std::size_t at = 0;
  while (at < commands.size()) {
    const std::size_t end = std::min(commands.find(' ', at), commands.size());
    if (commands.substr(at, end - at) == command) return true;
    at = end + 1;
  }
  return false;
}

}  // namespace

std::string flag_of(const std::string& command, const std::string& field) {
  for (const FieldFlag& row : kTable)
    if (row.field == field && applies(row.commands, command)) return std::string(row.flag);
  return "";
}

bool field_known(const std::string& field) {
  return std::any_of(kTable.begin(), kTable.end(),
                     [&](const FieldFlag& row) { return row.field == field; });
}

std::string user_message(const CLI::App& cli, const std::string& what) {
  const std::vector<CLI::App*> parsed = cli.get_subcommands();
  const std::string command = parsed.empty() ? std::string() : parsed.front()->get_name();
  // Every field the table knows is shown as the flag typed, wherever the text names it: the
  // field at fault of an OptionError, and hints such as "use a larger NearestK.k" in a
  // DataError. A field without a flag in this command stays as named.
  std::string out = what;
  for (const FieldFlag& row : kTable) {
    const std::string field(row.field);
    const std::string flag = flag_of(command, field);
    if (flag.empty()) continue;
    for (std::size_t at = out.find(field); at != std::string::npos;
         at = out.find(field, at + flag.size())) {
      const std::size_t end = at + field.size();
      const auto word = [](char c) {
        return std::isalnum(static_cast<unsigned char>(c)) || c == '_';
      };
      if ((at > 0 && (word(out[at - 1]) || out[at - 1] == '.')) ||
          (end < out.size() && word(out[end]))) {
        at += 1;  // part of a longer name
        continue;
      }
      out.replace(at, field.size(), flag);
    }
  }
  return out;
}

}  // namespace unfurl::app
