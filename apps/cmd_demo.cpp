#include <fmt/core.h>

#include "apps/command.hpp"
#include "engine/synthetic.hpp"

namespace unfurl::app {

void add_demo_command(CLI::App& app, GlobalOptions& g) {
  auto* cmd = app.add_subcommand("demo", "Generate the ocean-buoy scenario and unfold it");
  auto rows = std::make_shared<std::size_t>(4000);
  auto out = std::make_shared<std::string>("demo-output");
  cmd->add_option("--points", *rows, "Number of buoy records to generate")
      ->check(CLI::Range(std::size_t{1}, std::size_t{1} << 31))
      ->capture_default_str();
  cmd->add_option("--out", *out, "Folder for the demo's data, map and report")
      ->capture_default_str();
  cmd->callback([&g, rows, out] {
    apply_globals(g);
    const SyntheticSet set = ocean_buoys(*rows, g.seed);
    say(g, fmt::format("demo: generated {} buoy records x {} sensor channels", set.points.rows,
                       set.points.cols));
  });
}

}  // namespace unfurl::app
