// apps/option_flags: every options-struct field that engine/ and io/ name in an OptionError
// has a row in the one field-to-flag table, and messages show the flag of the command in use.
#include "apps/option_flags.hpp"

#include <catch2/catch.hpp>
#include <filesystem>
#include <fstream>
#include <regex>
#include <set>
#include <sstream>
#include <string>
#include <vector>

#include "apps/exit_codes.hpp"

namespace {

namespace fs = std::filesystem;

// Every "Struct.field" written as the first argument of OptionError(" in the sources under
// `folder`, with the file it was seen in.
std::vector<std::pair<std::string, std::string>> thrown_fields(const fs::path& folder) {
  const std::regex thrown(R"re(OptionError\(\s*"([A-Za-z_][A-Za-z0-9_]*\.[A-Za-z0-9_.]+)")re");
  std::vector<std::pair<std::string, std::string>> out;
  for (const auto& entry : fs::recursive_directory_iterator(folder)) {
    const auto ext = entry.path().extension();
    if (!entry.is_regular_file() || (ext != ".cpp" && ext != ".hpp")) continue;
    std::ifstream in(entry.path());
    std::stringstream text;
    text << in.rdbuf();
    const std::string source = text.str();
    for (std::sregex_iterator it(source.begin(), source.end(), thrown), end; it != end; ++it)
      out.emplace_back((*it)[1].str(), entry.path().string());
  }
  return out;
}

// A parsed command line of a one-command app named `command`, as main() holds it.
struct ParsedApp {
  CLI::App cli{"test"};
  explicit ParsedApp(const std::string& command) {
    cli.add_subcommand(command, "");
    const char* argv[] = {"unfurl", command.c_str()};
    cli.parse(2, argv);
  }
};

}  // namespace

TEST_CASE("every field engine/ and io/ name in an OptionError has a row in the flag table",
          "[option_flags]") {
  std::set<std::string> missing;
  std::size_t seen = 0;
  for (const char* room : {"engine", "io"})
    for (const auto& [field, file] : thrown_fields(fs::path(UNFURL_SOURCE_DIR) / room)) {
      ++seen;
      if (!unfurl::app::field_known(field)) missing.insert(field + " (" + file + ")");
    }
  CAPTURE(missing);
  // io/ names its fields on this branch (points, edge lists, distance matrices): the scan
  // must find them, else it checks nothing.
  CHECK(seen >= 10);
  CHECK(missing.empty());
}

TEST_CASE("the field table knows an unknown field as unknown", "[option_flags]") {
  CHECK_FALSE(unfurl::app::field_known("NoSuchOptions.k"));
  CHECK(unfurl::app::field_known("NearestK.k"));
  CHECK(unfurl::app::flag_of("embed", "NoSuchOptions.k").empty());
}

TEST_CASE("a field's flag depends on the command that uses it", "[option_flags]") {
  using unfurl::app::flag_of;
  CHECK(flag_of("embed", "NearestK.k") == "--k");
  CHECK(flag_of("embed", "QualityOptions.ks") == "--score-k");
  CHECK(flag_of("score", "QualityOptions.ks") == "--score-k");
  // The intrinsic dimension's k is the graph's --k in embed, --dimension-k in score.
  CHECK(flag_of("embed", "DimensionOptions.k") == "--k");
  CHECK(flag_of("demo", "DimensionOptions.k") == "--k");
  CHECK(flag_of("score", "DimensionOptions.k") == "--dimension-k");
  CHECK(flag_of("embed", "PointReadOptions.rows") == "--rows");
  CHECK(flag_of("embed", "DistanceMatrixOptions.missing_value") == "--missing");
  // A field no flag sets keeps its name.
  CHECK(flag_of("embed", "GraphOptions.block_rows").empty());
}

TEST_CASE("messages show the flag of the command in use", "[option_flags]") {
  using unfurl::OptionError;
  using unfurl::app::user_message;
  ParsedApp score("score");
  CHECK(user_message(score.cli,
                     OptionError("QualityOptions.ks", "must be at least 1, got 0").what()) ==
        "--score-k: must be at least 1, got 0");
  CHECK(user_message(score.cli, OptionError("DimensionOptions.k", "must be 0 or 2+").what()) ==
        "--dimension-k: must be 0 or 2+");
  ParsedApp embed("embed");
  CHECK(user_message(embed.cli, OptionError("DimensionOptions.k", "must be 0 or 2+").what()) ==
        "--k: must be 0 or 2+");
  CHECK(user_message(embed.cli,
                     OptionError("GraphOptions.block_rows", "must be at least 1").what()) ==
        "GraphOptions.block_rows: must be at least 1");
  // A message that names its option itself is shown as it is.
  CHECK(user_message(embed.cli, "--radius: must be positive") == "--radius: must be positive");
  // Hints inside other errors name flags too; a longer name that ends like a field is kept.
  CHECK(user_message(embed.cli, unfurl::DataError("the graph has 3 components: use a larger "
                                                  "NearestK.k or WithinRadius.radius, or "
                                                  "ComponentOptions.policy largest")
                                    .what()) ==
        "the graph has 3 components: use a larger --k or --radius, or --disconnected largest");
  CHECK(user_message(embed.cli, "XNearestK.k and NearestK.kk") == "XNearestK.k and NearestK.kk");
}

TEST_CASE("each error class has its exit code, and a rethrown error keeps class and field",
          "[option_flags]") {
  using unfurl::app::exit_code_of;
  using unfurl::app::ExitCode;
  CHECK(exit_code_of(unfurl::OptionError("x")) == ExitCode::usage);
  CHECK(exit_code_of(unfurl::DataError("x")) == ExitCode::bad_data);
  CHECK(exit_code_of(unfurl::MissingInputError("x")) == ExitCode::no_input);
  CHECK(exit_code_of(unfurl::ResourceError("x")) == ExitCode::unavailable);
  CHECK(exit_code_of(unfurl::OutputError("x")) == ExitCode::cant_create);
  CHECK(exit_code_of(unfurl::IoError("x")) == ExitCode::io_error);
  CHECK(exit_code_of(unfurl::InterruptedError("x")) == ExitCode::interrupted);
  CHECK(exit_code_of(unfurl::InternalError("x")) == ExitCode::internal);
  try {
    unfurl::OptionError("PointReadOptions.rows", "bad").rethrow_with("PointReadOptions.rows: b");
  } catch (const unfurl::OptionError& e) {
    CHECK(e.field() == "PointReadOptions.rows");
    CHECK(std::string(e.what()) == "PointReadOptions.rows: b");
  }
  CHECK_THROWS_AS(unfurl::IoError("a").rethrow_with("b"), unfurl::IoError);
  CHECK_THROWS_AS(unfurl::InterruptedError("a").rethrow_with("b"), unfurl::InterruptedError);
}
