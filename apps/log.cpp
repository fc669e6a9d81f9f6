#include "apps/log.hpp"

#include <fmt/chrono.h>
#include <fmt/core.h>
#include <pthread.h>
#include <spdlog/logger.h>
#include <spdlog/pattern_formatter.h>
#include <spdlog/sinks/ansicolor_sink.h>
#include <spdlog/sinks/basic_file_sink.h>
#include <spdlog/sinks/stdout_sinks.h>
#include <sys/ioctl.h>
#include <unistd.h>

#include <algorithm>
#include <cerrno>
#include <chrono>
#include <condition_variable>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <memory>
#include <mutex>
#include <nlohmann/json.hpp>
#include <thread>

#include "apps/log_text.hpp"
#include "apps/run_info.hpp"
#include "engine/error.hpp"

namespace unfurl::app {
namespace {

using Clock = std::chrono::steady_clock;
using nlohmann::json;
using spdlog::level::level_enum;

const Clock::time_point process_start = Clock::now();
const std::chrono::system_clock::time_point process_start_utc = std::chrono::system_clock::now();

std::uint64_t resident_bytes() {
  std::ifstream statm("/proc/self/statm");
  std::uint64_t size = 0, resident = 0;
  if (!(statm >> size >> resident)) return 0;
  return resident * static_cast<std::uint64_t>(sysconf(_SC_PAGESIZE));
}

// Columns of the terminal on stderr (80 when it does not say).
std::size_t terminal_columns() {
  winsize size{};
  if (ioctl(STDERR_FILENO, TIOCGWINSZ, &size) == 0 && size.ws_col > 0) return size.ws_col;
  return 80;
}

// The seconds between progress lines in a log: 30, or UNFURL_LOG_INTERVAL when it is a
// positive number (for tests and for logs read closely).
double line_interval() {
  if (const char* v = std::getenv("UNFURL_LOG_INTERVAL")) {
    char* end = nullptr;
    const double s = std::strtod(v, &end);
    if (end != v && *end == '\0' && s > 0) return s;
  }
  return 30.0;
}

std::shared_ptr<spdlog::logger> make_logger(const char* name, spdlog::sink_ptr sink,
                                            const std::string& pattern, bool utc,
                                            const std::string& eol = "\n") {
  sink->set_formatter(std::make_unique<spdlog::pattern_formatter>(
      pattern, utc ? spdlog::pattern_time_type::utc : spdlog::pattern_time_type::local, eol));
  auto logger = std::make_shared<spdlog::logger>(name, std::move(sink));
  logger->set_level(spdlog::level::trace);
  logger->flush_on(spdlog::level::trace);
  // A write that fails is seen through ferror (stdout) or not at all (a log must not end a
  // run); spdlog's default handler would print on stderr.
  logger->set_error_handler([](const std::string&) {});
  return logger;
}

spdlog::sink_ptr stderr_sink(bool colour) {
  return std::make_shared<spdlog::sinks::ansicolor_stderr_sink_mt>(
      colour ? spdlog::color_mode::always : spdlog::color_mode::never);
}

class RunLog;
RunLog& run_log();

class RunLog final : public ProgressSink {
 public:
  ~RunLog() override { finish(-1); }

  void start(const LogSettings& settings) {
    std::lock_guard hold(mutex_);
    if (configured_) return;
    configured_ = true;
    settings_ = settings;
    if (!settings_.json_file.empty()) open_json();
    open_locked();
    write_json({{"event", "run_started"}, {"pid", static_cast<std::int64_t>(getpid())}});
  }

  void note(const std::string& line, bool quiet) {
    std::lock_guard hold(mutex_);
    open_locked();
    write_json({{"event", "note"}, {"text", line}});
    if (quiet) return;
    clear_live_line();
    errno = 0;
    out_->info("{}", line);  // flushed: in order with stderr when both go to one file
    // The run goes on (its outputs are still written); main() ends it with exit 74.
    if (std::ferror(stdout) && stdout_errno_ == 0) stdout_errno_ = errno ? errno : EIO;
  }

  int stdout_error() {
    std::lock_guard hold(mutex_);
    return stdout_errno_;
  }

  void remark(const std::string& line, bool quiet) {
    std::lock_guard hold(mutex_);
    open_locked();
    write_json({{"event", "remark"}, {"text", line}});
    if (quiet || settings_.quiet) return;
    clear_live_line();
    err_->warn("unfurl: note: {}", line);
  }

  void error(const std::string& line, int exit_code) {
    std::lock_guard hold(mutex_);
    open_locked();
    write_json({{"event", "error"}, {"text", line}, {"exit_code", exit_code}});
    clear_live_line();
    err_->error("unfurl: {}", line);
  }

  void finish(int exit_code) {
    {
      std::lock_guard hold(mutex_);
      if (finished_ || !started_) return;
      finished_ = true;
      stopping_ = true;
      clear_live_line();
      if (exit_code >= 0)
        write_json({{"event", "run_finished"},
                    {"exit_code", exit_code},
                    {"seconds", run_seconds()},
                    {"peak_memory_bytes", peak_memory_bytes()}});
      if (json_) json_->flush();
    }
    wake_.notify_all();
    if (ticker_.joinable()) ticker_.join();
  }

  void step_started(std::string_view step, std::uint64_t total) noexcept override {
    try {
      std::lock_guard hold(mutex_);
      open_locked();
      start_ticker_locked();
      open_ = true;
      step_ = std::string(step);
      step_start_ = last_line_ = last_json_ = Clock::now();
      step_start_utc_ = utc_now_with_millis();
      step_peak_ = resident_bytes();
      write_json({{"event", "step_started"},
                  {"step", step_},
                  {"total", total ? json(total) : json(nullptr)},
                  {"unit", unit_of(step_)}});
      if (live_ && !settings_.quiet) draw_live(step_start_);
    } catch (...) {  // progress must never end a run
    }
  }

  void step_finished(std::string_view step, bool ok) noexcept override {
    try {
      std::lock_guard hold(mutex_);
      if (!open_) return;
      StepRecord r;
      r.step = std::string(step);
      r.started = step_start_utc_;
      r.seconds = std::chrono::duration<double>(Clock::now() - step_start_).count();
      r.done = done();
      r.total = total();
      r.peak_memory_bytes = std::max(step_peak_, resident_bytes());
      r.ok = ok;
      open_ = false;
      write_json({{"event", "step_finished"},
                  {"step", r.step},
                  {"ok", ok},
                  {"seconds", r.seconds},
                  {"done", r.done},
                  {"total", r.total ? json(r.total) : json(nullptr)},
                  {"unit", unit_of(r.step)},
                  {"peak_memory_bytes", r.peak_memory_bytes}});
      if (!settings_.quiet) {
        const std::string text = finished_text(r);
        clear_live_line();
        lines_->log(ok ? spdlog::level::info : spdlog::level::warn, "{}", text);
      }
      steps_.push_back(std::move(r));
    } catch (...) {
    }
  }

  std::vector<StepRecord> steps() {
    std::lock_guard hold(mutex_);
    return steps_;
  }

 private:
  // Sinks for the settings; the watcher thread. Called with the mutex held.
  void open_locked() {
    if (started_) return;
    started_ = true;
    const char* term = std::getenv("TERM");
    live_ = isatty(STDERR_FILENO) && !(term && std::string(term) == "dumb");
    const char* no_colour = std::getenv("NO_COLOR");
    const bool colour = live_ && !(no_colour && *no_colour);
    interval_ = line_interval();
    out_ = make_logger("stdout", std::make_shared<spdlog::sinks::stdout_sink_mt>(), "%v", false);
    err_ = make_logger("stderr", stderr_sink(colour), "%^%v%$", false);
    // On a terminal each step's last line replaces its live line; in a log it is a plain
    // timestamped line.
    lines_ = make_logger("lines", stderr_sink(colour),
                         live_ ? "\r\033[K%^%v%$" : "%Y-%m-%dT%H:%M:%S.%eZ %v", true);
    if (live_) live_line_ = make_logger("live", stderr_sink(colour), "\r\033[K%^%v%$", false, "");
  }

  // The watcher thread, from the first step on: commands that only read files (inspect,
  // and every command before its first step) stay one thread while io/'s isolated HDF5
  // check forks. Called with the mutex held.
  void start_ticker_locked() {
    if (ticker_.joinable()) return;
    // The ticker allocates (it reads /proc/self/statm, formats lines) and does all of that
    // with mutex_ held. A fork taken while it is half way through an allocation leaves the
    // child with the allocator's lock held by a thread that does not exist there: io/'s
    // isolated HDF5 check then hangs in its child until the time limit (seen under
    // AddressSanitizer, whose allocator takes no lock around fork). So a fork waits for the
    // ticker to be idle.
    static std::once_flag fork_guard;
    std::call_once(fork_guard, [] {
      ::pthread_atfork([] { run_log().mutex_.lock(); }, [] { run_log().mutex_.unlock(); },
                       [] { run_log().mutex_.unlock(); });
    });
    ticker_ = std::thread([this] { watch(); });
  }

  void open_json() {
    namespace fs = std::filesystem;
    const fs::path file(settings_.json_file);
    const fs::path parent = file.parent_path().empty() ? fs::path(".") : file.parent_path();
    std::error_code ec;
    if (!fs::is_directory(parent, ec))
      throw OutputError("--log-json " + settings_.json_file + ": no folder " + parent.string());
    if (fs::is_directory(file, ec))
      throw OutputError("--log-json " + settings_.json_file + ": is a folder");
    try {
      json_ = make_logger("json",
                          std::make_shared<spdlog::sinks::basic_file_sink_mt>(settings_.json_file,
                                                                              /*truncate=*/false),
                          "%v", true);
    } catch (const spdlog::spdlog_ex& e) {
      throw OutputError("--log-json " + settings_.json_file + ": cannot append: " + e.what());
    }
  }

  void write_json(json event) {
    if (!json_) return;
    json line = {{"time", utc_now_with_millis()}};
    line.update(event);
    json_->info("{}", line.dump(-1, ' ', false, json::error_handler_t::replace));
  }

  void clear_live_line() {
    if (!live_shown_) return;
    live_line_->debug("");
    live_shown_ = false;
  }

  void draw_live(Clock::time_point now) {
    const double elapsed = std::chrono::duration<double>(now - step_start_).count();
    std::string text = live_text(step_, done(), total(), elapsed);
    const std::size_t width = terminal_columns();
    if (text.size() >= width) text.resize(width > 1 ? width - 1 : 0);
    live_line_->debug("{}", text);
    live_shown_ = true;
    last_draw_ = now;
  }

  // The watcher: samples the resident size for the step's peak, redraws the live line (five
  // times a second) or writes a progress line (every interval_ seconds) and JSON event.
  void watch() {
    std::unique_lock hold(mutex_);
    while (!stopping_) {
      wake_.wait_for(hold, std::chrono::milliseconds(100));
      if (stopping_ || !open_) continue;
      step_peak_ = std::max(step_peak_, resident_bytes());
      const auto now = Clock::now();
      const double elapsed = std::chrono::duration<double>(now - step_start_).count();
      if (!settings_.quiet && live_ && now - last_draw_ >= std::chrono::milliseconds(200))
        draw_live(now);
      if (!settings_.quiet && !live_ &&
          std::chrono::duration<double>(now - last_line_).count() >= interval_) {
        lines_->info("{}", progress_text(step_, done(), total(), elapsed));
        last_line_ = now;
      }
      if (json_ && std::chrono::duration<double>(now - last_json_).count() >= interval_) {
        const std::uint64_t d = done(), t = total();
        const double rate = elapsed > 0 ? static_cast<double>(d) / elapsed : 0.0;
        const double left = seconds_left(d, t, elapsed);
        write_json({{"event", "progress"},
                    {"step", step_},
                    {"done", d},
                    {"total", t ? json(t) : json(nullptr)},
                    {"unit", unit_of(step_)},
                    {"seconds", elapsed},
                    {"rate", rate},
                    {"seconds_left", left >= 0 ? json(left) : json(nullptr)}});
        last_json_ = now;
      }
    }
  }

  std::mutex mutex_;
  std::condition_variable wake_;
  std::thread ticker_;
  LogSettings settings_;
  bool configured_ = false;  // start() ran (a message before it opens the sinks with defaults)
  bool started_ = false, finished_ = false, stopping_ = false;
  bool live_ = false, live_shown_ = false;
  int stdout_errno_ = 0;  // errno of the first failed write to stdout
  double interval_ = 30.0;
  std::shared_ptr<spdlog::logger> out_, err_, lines_, live_line_, json_;
  bool open_ = false;
  std::string step_, step_start_utc_;
  Clock::time_point step_start_, last_line_, last_json_, last_draw_;
  std::uint64_t step_peak_ = 0;
  std::vector<StepRecord> steps_;
};

RunLog& run_log() {
  static RunLog log;
  return log;
}

}  // namespace

void start_log(const LogSettings& settings) {
  run_log().start(settings);
}
void log_note(const std::string& line, bool quiet) {
  run_log().note(line, quiet);
}
void log_remark(const std::string& line, bool quiet) {
  run_log().remark(line, quiet);
}
void log_error(const std::string& line, int exit_code) {
  run_log().error(line, exit_code);
}
int stdout_error() {
  return run_log().stdout_error();
}
void finish_log(int exit_code) {
  run_log().finish(exit_code);
}
ProgressSink* progress_sink() {
  return &run_log();
}
std::vector<StepRecord> finished_steps() {
  return run_log().steps();
}

std::string utc_now_with_millis() {
  return utc_text(std::chrono::system_clock::now());
}
std::string run_started_utc() {
  return utc_text(process_start_utc);
}
double run_seconds() {
  return std::chrono::duration<double>(Clock::now() - process_start).count();
}

}  // namespace unfurl::app
