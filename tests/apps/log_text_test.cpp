#include "apps/log_text.hpp"

#include <catch2/catch.hpp>
#include <chrono>

using namespace unfurl::app;

TEST_CASE("log text: time left is the rest at the mean rate so far", "[log]") {
  // Arithmetic: 250 of 1000 units in 5 s is 50 per s, so 750 left take 15 s.
  CHECK(seconds_left(250, 1000, 5.0) == Approx(15.0));
  CHECK(seconds_left(0, 1000, 5.0) < 0);      // no rate yet
  CHECK(seconds_left(10, 0, 5.0) < 0);        // no total
  CHECK(seconds_left(1200, 1000, 5.0) == 0);  // counted past the total: nothing left
}

TEST_CASE("log text: durations read as seconds, then minutes and hours", "[log]") {
  CHECK(duration_text(0.4249) == "0.42 s");
  CHECK(duration_text(12.34) == "12.3 s");
  CHECK(duration_text(125) == "2:05");
  CHECK(duration_text(3725) == "1:02:05");
}

TEST_CASE("log text: progress lines hold the count, rate and time left", "[log]") {
  CHECK(progress_text("graph", 250, 1000, 5.0) ==
        "graph: 25% (250 of 1000 query rows), 50.0 per s, 5.00 s so far, about 15.0 s left");
  CHECK(progress_text("spectral", 0, 0, 2.0) == "spectral: 2.00 s so far");
  CHECK(live_text("landmark rows", 64, 256, 4.0) ==
        "landmark rows   25%  64/256 rows  16.0/s  4.00 s, about 12.0 s left");
  StepRecord done{.step = "scores",
                  .started = "",
                  .seconds = 1.5,
                  .done = 2000,
                  .total = 2000,
                  .peak_memory_bytes = 3 << 20};
  CHECK(finished_text(done) == "scores: done in 1.50 s (2000 of 2000 points), peak memory 3.0 MiB");
  done.ok = false;
  CHECK(finished_text(done).rfind("scores: stopped after 1.50 s", 0) == 0);
}

TEST_CASE("log text: times are UTC ISO 8601 with milliseconds", "[log]") {
  // 1,000,000,000.5 s after the Unix epoch is 2001-09-09T01:46:40.500Z (date arithmetic,
  // common practice, no source).
  const std::chrono::system_clock::time_point t{std::chrono::milliseconds(1000000000500)};
  CHECK(utc_text(t) == "2001-09-09T01:46:40.500Z");
}
