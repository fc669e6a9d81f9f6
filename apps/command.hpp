// The command shell: every subcommand lives in its own apps/cmd_*.cpp and is added to the
// CLI11 app by an add_*_command function listed in main.cpp. Commands throw unfurl::Error;
// main() alone turns exceptions into one-line messages and exit codes.
#pragma once

#include <atomic>
#include <cstdint>
#include <string>

#include <CLI/CLI.hpp>

#include "apps/log.hpp"
#include "engine/stop.hpp"

namespace unfurl::app {

// Options every command shares. They are accepted before or after the subcommand name.
struct GlobalOptions {
  int threads = 0;         // 0: all cores OpenMP offers
  std::uint64_t seed = 1;  // every random choice derives from this
  bool quiet = false;      // print nothing but errors
  std::string log_json;    // --log-json: append the run's events as JSON lines (apps/log.hpp)
};

// Set by the SIGINT/SIGTERM/SIGUSR1/SIGHUP handlers installed in main().
extern std::atomic<bool> g_stop_requested;
inline StopToken stop_token() {
  return StopToken{&g_stop_requested, progress_sink()};
}

// Prints a line on stdout unless --quiet (through the log: apps/log.hpp).
void say(const GlobalOptions& g, const std::string& line);
// Every command calls this first: applies --threads to OpenMP, opens the log.
void apply_globals(const GlobalOptions& g);

void add_demo_command(CLI::App& app, GlobalOptions& g);
void add_inspect_command(CLI::App& app, GlobalOptions& g);
void add_embed_command(CLI::App& app, GlobalOptions& g);
void add_graph_command(CLI::App& app, GlobalOptions& g);
void add_place_command(CLI::App& app, GlobalOptions& g);
void add_score_command(CLI::App& app, GlobalOptions& g);
void add_plot_command(CLI::App& app, GlobalOptions& g);
void add_sweep_command(CLI::App& app, GlobalOptions& g);

}  // namespace unfurl::app
