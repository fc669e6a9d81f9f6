#include "apps/log_text.hpp"

#include <fmt/chrono.h>
#include <fmt/core.h>

#include <algorithm>
#include <cmath>
#include <ctime>

#include "apps/run_info.hpp"

namespace unfurl::app {
namespace {

// "4500 of 10000 query rows", "4500 query rows" when the total is not known.
std::string count_text(const std::string& step, std::uint64_t done, std::uint64_t total,
                       const char* of) {
  if (total == 0) return fmt::format("{} {}", done, unit_of(step));
  return fmt::format("{}{}{} {}", std::min(done, total), of, total, unit_of(step));
}

double rate_of(std::uint64_t done, double elapsed) {
  return elapsed > 0 ? static_cast<double>(done) / elapsed : 0.0;
}

std::string rate_text(double rate) {
  if (rate >= 100) return fmt::format("{:.0f}", rate);
  return rate >= 1 ? fmt::format("{:.1f}", rate) : fmt::format("{:.2g}", rate);
}

}  // namespace

std::string unit_of(const std::string& step) {
  if (step == "graph") return "query rows";
  if (step == "landmark rows" || step == "geodesic rows" || step == "placement" ||
      step == "residual variance" || step == "residual rows")
    return "rows";
  if (step == "spectral" || step == "scores") return "points";
  return "units";
}

double seconds_left(std::uint64_t done, std::uint64_t total, double elapsed) {
  if (total == 0 || done == 0 || elapsed <= 0) return -1;
  if (done >= total) return 0;
  return static_cast<double>(total - done) / rate_of(done, elapsed);
}

std::string duration_text(double seconds) {
  if (seconds < 10) return fmt::format("{:.2f} s", seconds);
  if (seconds < 60) return fmt::format("{:.1f} s", seconds);
  const auto whole = static_cast<long long>(std::llround(seconds));
  if (whole < 3600) return fmt::format("{}:{:02}", whole / 60, whole % 60);
  return fmt::format("{}:{:02}:{:02}", whole / 3600, whole / 60 % 60, whole % 60);
}

std::string live_text(const std::string& step, std::uint64_t done, std::uint64_t total,
                      double elapsed) {
  std::string text = step;
  if (total > 0)
    text += fmt::format("  {:3.0f}%", 100.0 * static_cast<double>(std::min(done, total)) /
                                          static_cast<double>(total));
  if (done > 0 || total > 0)
    text +=
        "  " + count_text(step, done, total, "/") + "  " + rate_text(rate_of(done, elapsed)) + "/s";
  text += "  " + duration_text(elapsed);
  if (const double left = seconds_left(done, total, elapsed); left >= 0)
    text += ", about " + duration_text(left) + " left";
  return text;
}

std::string progress_text(const std::string& step, std::uint64_t done, std::uint64_t total,
                          double elapsed) {
  std::string text = step + ": ";
  if (total > 0)
    text +=
        fmt::format("{:.0f}% ({}), ",
                    100.0 * static_cast<double>(std::min(done, total)) / static_cast<double>(total),
                    count_text(step, done, total, " of "));
  else if (done > 0)
    text += count_text(step, done, total, " of ") + ", ";
  if (done > 0) text += rate_text(rate_of(done, elapsed)) + " per s, ";
  text += duration_text(elapsed) + " so far";
  if (const double left = seconds_left(done, total, elapsed); left >= 0)
    text += ", about " + duration_text(left) + " left";
  return text;
}

std::string finished_text(const StepRecord& s) {
  std::string text = fmt::format("{}: {} {}", s.step, s.ok ? "done in" : "stopped after",
                                 duration_text(s.seconds));
  if (s.done > 0 || s.total > 0) text += " (" + count_text(s.step, s.done, s.total, " of ") + ")";
  return text + ", peak memory " + human_bytes(s.peak_memory_bytes);
}

std::string utc_text(std::chrono::system_clock::time_point t) {
  const auto ms = std::chrono::duration_cast<std::chrono::milliseconds>(t.time_since_epoch());
  const std::time_t seconds = static_cast<std::time_t>(ms.count() / 1000);
  return fmt::format("{:%Y-%m-%dT%H:%M:%S}.{:03}Z", fmt::gmtime(seconds), ms.count() % 1000);
}

}  // namespace unfurl::app
