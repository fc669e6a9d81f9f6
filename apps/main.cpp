#include <omp.h>

#include <csignal>
#include <cstdio>
#include <exception>
#include <new>

#include <fmt/core.h>

#include "apps/args.hpp"
#include "apps/command.hpp"
#include "apps/usage_errors.hpp"
#include "engine/error.hpp"

namespace unfurl::app {

std::atomic<bool> g_stop_requested{false};

void say(const GlobalOptions& g, const std::string& line) {
  if (!g.quiet) fmt::print("{}\n", line);
}

void apply_globals(const GlobalOptions& g) {
  if (g.threads > 0) omp_set_num_threads(g.threads);
}

}  // namespace unfurl::app

namespace {

extern "C" void request_stop(int) {
  unfurl::app::g_stop_requested.store(true);
}

int fail(unfurl::ExitCode code, const char* message) {
  std::fflush(stdout);
  fmt::print(stderr, "unfurl: {}\n", message);
  return static_cast<int>(code);
}

}  // namespace

int main(int argc, char** argv) {
  using namespace unfurl;
  CLI::App cli{
      "unfurl: unfold high-dimensional points into a few coordinates that follow "
      "geodesic distances over a neighbour graph."};
  cli.set_version_flag("--version", std::string("unfurl ") + UNFURL_VERSION);
  cli.require_subcommand(1);
  cli.fallthrough();  // global options may follow the subcommand name

  app::GlobalOptions g;
  cli.add_option("--threads", g.threads, "Threads to use (0: all cores)")
      ->transform(app::whole_number(0, 4096))
      ->capture_default_str();
  cli.add_option("--seed", g.seed,
                 "Seed for every random choice, 0 to 2^63 - 1 (stored in the map as an integer)")
      ->transform(app::whole_number(0, app::max_seed))
      ->capture_default_str();
  cli.add_flag("--quiet", g.quiet, "Print nothing but errors");

  app::install_usage_messages(cli);
  app::add_demo_command(cli, g);
  app::add_embed_command(cli, g);
  app::add_graph_command(cli, g);
  app::add_inspect_command(cli, g);
  app::add_score_command(cli, g);

  std::signal(SIGINT, request_stop);
  std::signal(SIGTERM, request_stop);
  std::signal(SIGUSR1, request_stop);

  try {
    cli.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    // CLI11 uses its own codes (100 and up) for parse errors; ours is 64 for every usage error.
    const int rc = cli.exit(e);
    return rc == 0 ? 0 : static_cast<int>(ExitCode::usage);
  } catch (const Error& e) {
    return fail(e.code(), e.what());
  } catch (const std::bad_alloc&) {
    return fail(ExitCode::unavailable, "out of memory (try fewer landmarks or --rows)");
  } catch (const std::exception& e) {
    return fail(ExitCode::internal, (std::string("internal error: ") + e.what()).c_str());
  }
  return 0;
}
