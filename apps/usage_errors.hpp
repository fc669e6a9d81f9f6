// Command-line parse errors (CLI11's) in the project's message form: one line on stderr,
// "unfurl: <what is wrong> (see unfurl [COMMAND] --help)". CLI11's own form is two lines, and
// a mistyped command name reaches it as "A subcommand is required", which names nothing.
#pragma once

#include <string>

#include <CLI/CLI.hpp>

namespace unfurl::app {

// The one-line message for a parse error `e` raised while `cli` (the top-level app) parsed.
std::string usage_error_line(const CLI::App& cli, const CLI::Error& e);

// Makes cli.exit(e) print usage_error_line for every parse error (help output is unchanged).
void install_usage_messages(CLI::App& cli);

}  // namespace unfurl::app
