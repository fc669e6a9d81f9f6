// How far a long run is, without I/O: the stages report, apps/ watches.
//
// A stage opens a step (ProgressStep, scoped) with its name and its total in units of work
// (query rows, landmark rows, triangulated points; 0 when unknown), and its loops add the
// units they finish with StopToken::advance: one relaxed atomic add per unit of work
// already polled for a stop (a Dijkstra source, a block of rows), never per edge. A loop
// that learns the total only once it starts raises it with StopToken::expect.
// step_started and step_finished run on the thread that opened the step, outside parallel
// regions; a watcher reads done() and total() from any thread at any time. Steps do not
// nest: a step opened while another is open counts into the same counters, and only the
// outermost one is announced.
#pragma once

#include <atomic>
#include <cstdint>
#include <exception>
#include <string_view>

namespace unfurl {

class ProgressSink {
 public:
  virtual ~ProgressSink() = default;

  // Called when the outermost step opens and when it ends (ok false: by an exception).
  // Implementations must not throw.
  virtual void step_started(std::string_view step, std::uint64_t total) noexcept = 0;
  virtual void step_finished(std::string_view step, bool ok) noexcept = 0;

  void advance(std::uint64_t units) noexcept { done_.fetch_add(units, std::memory_order_relaxed); }
  void expect(std::uint64_t units) noexcept { total_.fetch_add(units, std::memory_order_relaxed); }
  std::uint64_t done() const noexcept { return done_.load(std::memory_order_relaxed); }
  std::uint64_t total() const noexcept { return total_.load(std::memory_order_relaxed); }

 private:
  friend class ProgressStep;
  std::atomic<std::uint64_t> done_{0}, total_{0};
  int depth_ = 0;  // open steps; touched only by the thread that opens them
};

// Opens a step on `sink` (may be null) for its scope.
class ProgressStep {
 public:
  ProgressStep(ProgressSink* sink, std::string_view step, std::uint64_t total) noexcept
      : sink_(sink), step_(step) {
    if (!sink_) return;
    if (sink_->depth_++ > 0) return;
    sink_->done_.store(0, std::memory_order_relaxed);
    sink_->total_.store(total, std::memory_order_relaxed);
    sink_->step_started(step_, total);
  }
  ~ProgressStep() {
    if (!sink_ || --sink_->depth_ > 0) return;
    sink_->step_finished(step_, std::uncaught_exceptions() == exceptions_);
  }
  ProgressStep(const ProgressStep&) = delete;
  ProgressStep& operator=(const ProgressStep&) = delete;

 private:
  ProgressSink* sink_;
  std::string_view step_;
  int exceptions_ = std::uncaught_exceptions();
};

}  // namespace unfurl
