#include "apps/usage_errors.hpp"

#include <algorithm>

namespace unfurl::app {
namespace {

std::string command_names(const CLI::App& cli) {
  std::string names;
  for (const CLI::App* sub : cli.get_subcommands([](const CLI::App*) { return true; }))
    names += (names.empty() ? "" : ", ") + sub->get_name();
  return names;
}

}  // namespace

std::string usage_error_line(const CLI::App& cli, const CLI::Error& e) {
  std::string what = e.what();
  std::replace(what.begin(), what.end(), '\n', ' ');
  const std::vector<CLI::App*> parsed = cli.get_subcommands();
  if (parsed.empty() && e.get_name() == "RequiredError") {
    // No command was recognised: name the word that stood where the command goes.
    const std::vector<std::string> rest = cli.remaining();
    if (!rest.empty())
      return "unfurl: unknown command '" + rest.front() + "' (commands: " + command_names(cli) +
             ")";
    return "unfurl: a command is required (" + command_names(cli) + "; see unfurl --help)";
  }
  const std::string help = parsed.empty() ? std::string("unfurl --help")
                                          : "unfurl " + parsed.back()->get_name() + " --help";
  return "unfurl: " + what + " (see " + help + ")";
}

void install_usage_messages(CLI::App& cli) {
  cli.failure_message(
      [](const CLI::App* app, const CLI::Error& e) { return usage_error_line(*app, e) + "\n"; });
}

}  // namespace unfurl::app
