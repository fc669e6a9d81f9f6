#include "apps/option_flags.hpp"

#include <algorithm>
#include <array>
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
    FieldFlag{"GraphOptions.k", "", "--k"},
    FieldFlag{"GraphOptions.radius", "", "--radius"},
    FieldFlag{"GraphOptions.mutual", "", "--mutual"},
    FieldFlag{"GraphOptions.search", "", "--search"},
    FieldFlag{"GraphOptions.keep_duplicates", "", "--keep-duplicates"},
    FieldFlag{"GraphOptions.block_rows", "", ""},
    FieldFlag{"GraphOptions.duplicate_epsilon", "", ""},
    FieldFlag{"ComponentOptions.policy", "", "--disconnected"},
    // engine/: preprocessing, landmarks, the spectrum, the embedding
    FieldFlag{"PreprocessOptions.scale", "", "--scale"},
    FieldFlag{"PreprocessOptions.metric", "", "--metric"},
    FieldFlag{"PreprocessOptions.pca", "", "--pre-pca"},
    FieldFlag{"LandmarkOptions.count", "", "--landmarks"},
    FieldFlag{"LandmarkOptions.dims", "", "--dims"},
    FieldFlag{"LandmarkOptions.pick", "", "--pick"},
    FieldFlag{"SpectralOptions.dims", "", "--dims"},
    FieldFlag{"LinearOptions.dims", "", "--dims"},
    FieldFlag{"EmbedOptions.exact", "", "--landmarks"},
    FieldFlag{"EmbedOptions.order", "", "--node-order"},
    FieldFlag{"EmbedOptions.keep_geodesics", "", "--keep-geodesics"},
    // engine/: the scores (the neighbourhood sizes are --score-k: --k is the graph's)
    FieldFlag{"QualityOptions.ks", "", "--score-k"},
    FieldFlag{"QualityOptions.method", "", "--score-method"},
    FieldFlag{"QualityOptions.sample", "", "--sample"},
    FieldFlag{"QualityOptions.threads", "", "--threads"},
    FieldFlag{"QualityOptions.exact_limit", "", ""},
    // embed and demo take the intrinsic dimension's k from the graph's --k; score has its own
    FieldFlag{"AssessOptions.dimension_k", "embed demo", "--k"},
    FieldFlag{"AssessOptions.dimension_k", "", "--dimension-k"},
    FieldFlag{"AssessOptions.residual_pairs", "", ""},
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

std::string option_message(const CLI::App& cli, const OptionError& e) {
  const std::string what = e.what();
  const std::string& field = e.field();
  const std::vector<CLI::App*> parsed = cli.get_subcommands();
  const std::string command = parsed.empty() ? std::string() : parsed.front()->get_name();
  const std::string flag = field.empty() ? std::string() : flag_of(command, field);
  if (flag.empty() || what.rfind(field + ": ", 0) != 0) return what;
  return flag + what.substr(field.size());
}

}  // namespace unfurl::app
