// The words of the progress lines (apps/log.hpp), apart from the output machinery so that
// unit tests can read them.
#pragma once

#include <chrono>
#include <cstdint>
#include <string>

#include "apps/log.hpp"

namespace unfurl::app {

// What a step counts: "query rows" (graph), "rows" (landmark or geodesic rows), "points"
// (spectral, scores), else "units".
std::string unit_of(const std::string& step);

// Seconds left at the mean rate so far; -1 when not known (no total, nothing done yet).
double seconds_left(std::uint64_t done, std::uint64_t total, double elapsed);

// "0.42 s", "12.3 s", "2:05", "1:02:05".
std::string duration_text(double seconds);

// The live line: "graph  45%  4500/10000 query rows  1500/s  0:03, about 0:04 left".
std::string live_text(const std::string& step, std::uint64_t done, std::uint64_t total,
                      double elapsed);
// A progress line in a log: "graph: 45% (4500 of 10000 query rows), 1500 per s, 3.00 s so
// far, about 4.00 s left".
std::string progress_text(const std::string& step, std::uint64_t done, std::uint64_t total,
                          double elapsed);
// A step's last line: "graph: done in 3.21 s (10000 of 10000 query rows), peak memory
// 12.0 MiB", or "graph: stopped after ...".
std::string finished_text(const StepRecord& step);

// UTC, ISO 8601 with milliseconds: "2026-12-02T07:50:01.123Z".
std::string utc_text(std::chrono::system_clock::time_point t);

}  // namespace unfurl::app
