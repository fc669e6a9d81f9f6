// The command's one output path (apps/ alone prints), built on spdlog and fmt:
//   stdout  the results and notes (`say`), unless --quiet;
//   stderr  progress, remarks ("unfurl: note: ...") and errors ("unfurl: ..."). On a terminal
//           (stderr a tty, TERM not "dumb") a live line per step, redrawn in place, with rate
//           and time left, in colour unless NO_COLOR is set; otherwise one plain line per
//           step, "2026-12-02T07:50:01.123Z graph: done in 3.21 s, ...", and during a long step
//           at most one progress line every 30 s (UNFURL_LOG_INTERVAL seconds when set), with
//           no control characters. --quiet silences progress, notes and remarks, never errors.
//   --log-json FILE  every event as one JSON object per line, appended to FILE (README, "Long
//           runs: progress and logs", lists the events and their fields); --quiet does not
//           silence it.
// The progress comes from the engine through the StopToken's ProgressSink
// (engine/progress.hpp); the same sink times every step for the run record.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "engine/progress.hpp"

namespace unfurl::app {

struct LogSettings {
  bool quiet = false;     // no progress, notes or remarks; errors still print
  std::string json_file;  // --log-json: append JSON lines here ("": none)
};

// Opens the log for this run; a second call does nothing. Throws OutputError when the JSON
// file cannot be opened for appending.
void start_log(const LogSettings& settings);

// A result line on stdout (unless `quiet`) and a "note" event. A failed write does not stop
// the run: stdout_error() keeps its errno for main(), which ends the run with exit 74.
void log_note(const std::string& line, bool quiet);
int stdout_error();  // 0: every write to stdout went through
// "unfurl: note: LINE" on stderr (unless `quiet`) and a "remark" event.
void log_remark(const std::string& line, bool quiet);
// "unfurl: LINE" on stderr, always, and an "error" event.
void log_error(const std::string& line, int exit_code);
// Ends the log: a "run_finished" event and the progress watcher stopped. Safe to call twice.
void finish_log(int exit_code);

// The sink every StopToken of this process carries (apps/command.hpp, stop_token()).
ProgressSink* progress_sink();

// A step as the run record keeps it.
struct StepRecord {
  std::string step;
  std::string started;  // UTC, ISO 8601 with milliseconds
  double seconds = 0;
  std::uint64_t done = 0, total = 0;    // units of work; total 0: not known ahead
  std::uint64_t peak_memory_bytes = 0;  // highest resident size seen during the step
  bool ok = true;                       // false: ended by an error or a stop request
};
std::vector<StepRecord> finished_steps();

// When this process started (UTC, ISO 8601 with milliseconds), and seconds since then.
std::string run_started_utc();
double run_seconds();
std::string utc_now_with_millis();

}  // namespace unfurl::app
