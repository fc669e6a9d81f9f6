// Cooperative cancellation. apps/ sets the flag from a signal handler; long loops in engine/
// poll it between units of work (one Dijkstra source, one block of rows) and throw
// InterruptedError, so nothing is left half-written and the exit code says "interrupted".
// The same token carries the optional progress sink (engine/progress.hpp): the loops that
// poll also count the units they finish.
#pragma once

#include <atomic>
#include <cstdint>
#include <string_view>

#include "engine/error.hpp"
#include "engine/progress.hpp"

namespace unfurl {

struct StopToken {
  const std::atomic<bool>* flag = nullptr;  // null: never stops
  ProgressSink* progress = nullptr;         // null: nobody watches

  bool requested() const { return flag && flag->load(std::memory_order_relaxed); }
  void check(const char* stage) const {
    if (requested()) throw InterruptedError(std::string(stage) + ": stopped on request");
  }

  // Opens a progress step for the caller's scope (engine/progress.hpp).
  ProgressStep step(std::string_view name, std::uint64_t total) const {
    return ProgressStep(progress, name, total);
  }
  void advance(std::uint64_t units) const {
    if (progress) progress->advance(units);
  }
  void expect(std::uint64_t units) const {
    if (progress) progress->expect(units);
  }
  // The same token without progress: for a pass whose units another loop already counted.
  StopToken silent() const { return StopToken{flag, nullptr}; }
};

}  // namespace unfurl
