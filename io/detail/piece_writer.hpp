// Internal: the work folder's writer (io/work_folder.hpp). A piece arrives as a file the HDF5
// library has written with holes where its large arrays go, plus the caller's memory that
// belongs in those holes. The writer fills them, names the file by the checksum of its bytes
// and renames it into place, on a thread of its own while the run computes the next rows.
//
// Why the holes: the arrays reach the disk in one pass, from the caller's memory through a
// small aligned buffer with O_DIRECT, never copied whole and never read back for the checksum
// (it is taken from the same buffer). On this project's 2-core machines, buffered writes of a
// gigabyte cost about 3-4 CPU-seconds of kernel time and stall in writeback, direct ones a
// tenth of that (bench/RESULTS.md, lane writes).
//
// Why this split is safe with HDF5, which Debian builds without thread safety: the writer
// thread makes no HDF5 call (this file does not include it); the library is entered only by
// the threads that call the folder, one at a time under the folder's lock. No rule has to be
// remembered elsewhere: nothing here can reach HDF5.
#pragma once

#include <condition_variable>
#include <cstddef>
#include <cstdint>
#include <deque>
#include <filesystem>
#include <mutex>
#include <span>
#include <string>
#include <thread>
#include <vector>

namespace unfurl::io::detail {

// Caller memory that belongs at `offset` of a piece's file.
struct LentBytes {
  std::uint64_t offset = 0;
  std::span<const std::byte> bytes;
};

// A piece to finish: `temp` (a temporary name in `folder`) holds every byte but the lent
// ones; the result is named STEP.CHECKSUM.h5 and replaces the step's other pieces.
struct PieceJob {
  std::filesystem::path folder;
  std::string step;
  std::filesystem::path temp;
  std::vector<LentBytes> lent;  // within the file, not overlapping
};

// What became of a job: saved (under `file`), not saved (`error` says why), or skipped
// because an earlier job of the same writer failed (its temporary file removed).
struct PieceOutcome {
  enum class Kind { saved, unsaved, skipped };
  Kind kind = Kind::saved;
  std::string step;
  std::filesystem::path file;
  std::string error;
};

// Fills the holes of job.temp, checksums, renames and removes the step's other pieces, on the
// calling thread. Returns the piece's final path; IoError when a write or rename fails (the
// temporary file is left for the caller to remove).
std::filesystem::path finish_piece(const PieceJob& job);

// One background thread finishing jobs in the order given. The lent memory must stay alive
// and unchanged until drain() has returned.
class PieceWriter {
 public:
  PieceWriter() = default;
  ~PieceWriter();  // drains, then stops the thread
  PieceWriter(const PieceWriter&) = delete;
  PieceWriter& operator=(const PieceWriter&) = delete;

  void submit(PieceJob job);
  // Waits until every job submitted so far is finished; returns the outcomes not yet
  // returned, in submission order.
  std::vector<PieceOutcome> drain();
  // The outcomes finished so far and not yet returned, without waiting.
  std::vector<PieceOutcome> finished();

 private:
  void run();

  std::mutex mutex_;
  std::condition_variable changed_;
  std::deque<PieceJob> queue_;
  std::vector<PieceOutcome> outcomes_;
  bool busy_ = false;     // a job is being finished
  bool closing_ = false;  // the destructor asks the thread to end
  bool failed_ = false;   // a job failed: skip the rest
  std::thread thread_;    // started with the first job
};

}  // namespace unfurl::io::detail
