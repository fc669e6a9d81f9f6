// apps/usage_errors: CLI11 parse errors become one line naming what is wrong.
#include "apps/usage_errors.hpp"

#include <algorithm>
#include <catch2/catch.hpp>
#include <sstream>
#include <string>
#include <vector>

namespace {

// A two-command app like unfurl's; returns what cli.exit printed on stderr and its code.
std::pair<std::string, int> parse_error(std::vector<std::string> args) {
  CLI::App cli{"test"};
  cli.require_subcommand(1);
  cli.fallthrough();
  auto* embed = cli.add_subcommand("embed", "");
  std::string out;
  std::size_t k = 10;
  embed->add_option("-o,--out", out, "")->required();
  embed->add_option("--k", k, "");
  cli.add_subcommand("graph", "");
  unfurl::app::install_usage_messages(cli);
  std::vector<const char*> argv{"unfurl"};
  for (const auto& a : args) argv.push_back(a.c_str());
  try {
    cli.parse(static_cast<int>(argv.size()), argv.data());
  } catch (const CLI::ParseError& e) {
    std::ostringstream o, err;
    const int rc = cli.exit(e, o, err);
    return {err.str(), rc};
  }
  return {"", 0};
}

int lines(const std::string& s) {
  return static_cast<int>(std::count(s.begin(), s.end(), '\n'));
}

}  // namespace

TEST_CASE("usage errors: an unknown command is named with the known ones") {
  const auto [text, rc] = parse_error({"unroll", "x.h5"});
  CHECK(rc != 0);
  CHECK(lines(text) == 1);
  CHECK(text.find("unfurl: unknown command 'unroll'") == 0);
  CHECK(text.find("embed, graph") != std::string::npos);
}

TEST_CASE("usage errors: no command at all") {
  const auto [text, rc] = parse_error({});
  CHECK(rc != 0);
  CHECK(lines(text) == 1);
  CHECK(text.find("a command is required") != std::string::npos);
}

TEST_CASE("usage errors: unknown option, missing required option, bad value: one line each") {
  for (const auto& args :
       std::vector<std::vector<std::string>>{{"embed", "-o", "m.h5", "--frobnicate"},
                                             {"embed"},
                                             {"embed", "-o", "m", "--k", "abc"}}) {
    const auto [text, rc] = parse_error(args);
    INFO(text);
    CHECK(rc != 0);
    CHECK(lines(text) == 1);
    CHECK(text.rfind("unfurl: ", 0) == 0);
    CHECK(text.find("(see unfurl embed --help)") != std::string::npos);
  }
  CHECK(parse_error({"embed", "-o", "m.h5", "--frobnicate"}).first.find("--frobnicate") !=
        std::string::npos);
  CHECK(parse_error({"embed"}).first.find("--out") != std::string::npos);
  CHECK(parse_error({"embed", "-o", "m", "--k", "abc"}).first.find("abc") != std::string::npos);
}
