#include <fcntl.h>
#include <omp.h>
#include <unistd.h>

#include <cerrno>
#include <csignal>
#include <cstdio>
#include <cstring>
#include <exception>
#include <new>
#include <string>
#include <system_error>

#include <fmt/core.h>

#include "apps/args.hpp"
#include "apps/command.hpp"
#include "apps/exit_codes.hpp"
#include "apps/option_flags.hpp"
#include "apps/run_record.hpp"
#include "apps/usage_errors.hpp"
#include "apps/work_run.hpp"

namespace unfurl::app {

std::atomic<bool> g_stop_requested{false};

void say(const GlobalOptions& g, const std::string& line) {
  log_note(line, g.quiet);
}

void apply_globals(const GlobalOptions& g) {
  if (g.threads > 0) omp_set_num_threads(g.threads);
  start_log({.quiet = g.quiet, .json_file = g.log_json});
}

}  // namespace unfurl::app

namespace {

// The first request stops at the next safe point (exit 75, saved steps kept); a second
// SIGINT (Ctrl-C again) ends the process at once: a piece being written is then left under
// its temporary name and removed by the next run, never half-written under its own.
extern "C" void request_stop(int signal) {
  if (signal == SIGINT && unfurl::app::g_stop_requested.load()) {
    static const char line[] = "unfurl: interrupted again: stopped at once\n";
    [[maybe_unused]] const auto written = ::write(2, line, sizeof line - 1);
    ::_exit(128 + SIGINT);
  }
  unfurl::app::g_stop_requested.store(true);
}

int fail(unfurl::app::ExitCode code, const char* message) {
  std::fflush(stdout);
  unfurl::app::log_error(message, static_cast<int>(code));
  unfurl::app::finish_log(static_cast<int>(code));
  return static_cast<int>(code);
}

// A report that could not be printed is a failed run too (`unfurl inspect x >/dev/full`).
int stdout_failed(int err) {
  std::clearerr(stdout);
  return fail(unfurl::app::ExitCode::io_error,
              (std::string("standard output: write failed: ") + std::strerror(err)).c_str());
}

// A closed stdin, stdout or stderr is reopened on /dev/null read-only before any file is
// opened: else a map could receive descriptor 1 and the report's lines with it. Writes to
// it then fail (EBADF), so a closed stdout is still a failed write, exit 74.
void hold_standard_descriptors() {
  for (int fd = 0; fd <= 2; ++fd)
    if (::fcntl(fd, F_GETFD) == -1 && errno == EBADF) {
      const int opened = ::open("/dev/null", O_RDONLY);
      if (opened >= 0 && opened != fd) {
        ::dup2(opened, fd);
        ::close(opened);
      }
    }
}

// Flushes stdout; exit 74 when it fails, else `code`.
int finish(int code) {
  errno = 0;
  if (std::fflush(stdout) != 0 || std::ferror(stdout)) {
    const int first = unfurl::app::stdout_error();  // the notes flush line by line
    return stdout_failed(first ? first : errno ? errno : EIO);
  }
  unfurl::app::finish_log(code);
  return code;
}

}  // namespace

int main(int argc, char** argv) {
  using namespace unfurl;
  using app::ExitCode;
  // First of all: a stop request (Ctrl-C, a scheduler's SIGTERM or SIGUSR1 warning, a closed
  // terminal) ends the run with exit 75 at the next check; outputs are committed whole or not
  // at all.
  for (int s : {SIGINT, SIGTERM, SIGUSR1, SIGHUP}) std::signal(s, request_stop);
  app::remember_command_line(argc, argv);
  hold_standard_descriptors();
  app::remember_arguments(argc, argv);
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
  cli.add_flag("--quiet", g.quiet, "Print nothing but errors (no progress, no notes)");
  cli.add_option("--log-json", g.log_json,
                 "Append the run's events (steps, progress, notes, errors) to this file, one "
                 "JSON object per line");

  app::install_usage_messages(cli);
  app::add_demo_command(cli, g);
  app::add_embed_command(cli, g);
  app::add_graph_command(cli, g);
  app::add_inspect_command(cli, g);
  app::add_place_command(cli, g);
  app::add_plot_command(cli, g);
  app::add_score_command(cli, g);
  app::add_sweep_command(cli, g);

  try {
    cli.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    // CLI11 uses its own codes (100 and up) for parse errors; ours is 64 for every usage error.
    const int rc = cli.exit(e);
    return finish(rc == 0 ? 0 : static_cast<int>(ExitCode::usage));
  } catch (const std::system_error& e) {
    // fmt reports a failed write to stdout this way.
    if (std::ferror(stdout)) return stdout_failed(e.code().value());
    return fail(ExitCode::internal, (std::string("internal error: ") + e.what()).c_str());
  } catch (const Error& e) {
    // engine/ and io/ name options-struct fields: shown as the flags typed.
    return fail(app::exit_code_of(e), app::user_message(cli, e.what()).c_str());
  } catch (const std::bad_alloc&) {
    return fail(ExitCode::unavailable, "out of memory (try fewer landmarks or --rows)");
  } catch (const std::exception& e) {
    return fail(ExitCode::internal, (std::string("internal error: ") + e.what()).c_str());
  }
  return finish(0);
}
