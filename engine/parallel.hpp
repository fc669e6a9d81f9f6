// Exceptions must not escape an OpenMP region (that terminates the program). Every parallel
// loop in engine/ wraps its body in ExceptionCollector::run and calls rethrow() after the
// region: the first exception thrown by any thread is rethrown on the calling thread.
#pragma once

#include <exception>
#include <mutex>
#include <utility>

namespace unfurl {

class ExceptionCollector {
 public:
  template <class F>
  void run(F&& body) noexcept {
    try {
      std::forward<F>(body)();
    } catch (...) {
      std::lock_guard<std::mutex> lock(mutex_);
      if (!first_) first_ = std::current_exception();
    }
  }
  bool failed() const {
    std::lock_guard<std::mutex> lock(mutex_);
    return static_cast<bool>(first_);
  }
  void rethrow() const {
    if (first_) std::rethrow_exception(first_);
  }

 private:
  mutable std::mutex mutex_;
  std::exception_ptr first_;
};

// Threads to use: 0 means all that OpenMP offers.
int resolve_threads(int requested);

}  // namespace unfurl
