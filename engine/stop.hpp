// Cooperative cancellation. apps/ sets the flag from a signal handler; long loops in engine/
// poll it between units of work (one Dijkstra source, one block of rows) and throw
// InterruptedError, so nothing is left half-written and the exit code says "interrupted".
#pragma once

#include <atomic>

#include "engine/error.hpp"

namespace unfurl {

struct StopToken {
  const std::atomic<bool>* flag = nullptr;  // null: never stops

  bool requested() const { return flag && flag->load(std::memory_order_relaxed); }
  void check(const char* stage) const {
    if (requested()) throw InterruptedError(std::string(stage) + ": stopped on request");
  }
};

}  // namespace unfurl
