#include "io/detail/piece_writer.hpp"

#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <cerrno>
#include <cstdlib>
#include <cstring>
#include <memory>
#include <system_error>

#include "engine/error.hpp"
#include "io/detail/checksum.hpp"
#include "io/detail/piece_names.hpp"

namespace unfurl::io::detail {
namespace {

namespace fs = std::filesystem;

// O_DIRECT wants the buffer, the file offset and the length aligned to the device's logical
// block (512 or 4096 bytes): 4096 serves both. The buffer is a multiple of 32 bytes, as the
// checksum's updates must be.
constexpr std::size_t kAlign = 4096;
constexpr std::size_t kBuffer = std::size_t{8} << 20;

std::string why(const fs::path& file, const std::string& what) {
  return file.string() + ": " + what + ": " + std::strerror(errno);
}

class Fd {
 public:
  explicit Fd(int fd) : fd_(fd) {}
  ~Fd() {
    if (fd_ >= 0) ::close(fd_);
  }
  Fd(const Fd&) = delete;
  Fd& operator=(const Fd&) = delete;
  int get() const { return fd_; }
  void reset(int fd) {
    if (fd_ >= 0) ::close(fd_);
    fd_ = fd;
  }
  // Closes now, so that a failure of the last write shows (a file system may report it here).
  bool close() { return ::close(std::exchange(fd_, -1)) == 0; }

 private:
  int fd_;
};

struct FreeAligned {
  void operator()(std::byte* p) const { std::free(p); }
};
// One buffer for the writer's whole life: freeing an 8 MiB block after every piece would let
// glibc raise its mmap threshold, after which the run's own large arrays come from (and stay
// in) the heap; the process's peak then grew by 10-40 MiB at 60,000 points, run to run.
using WriteBuffer = std::unique_ptr<std::byte, FreeAligned>;
WriteBuffer write_buffer() {
  return WriteBuffer(static_cast<std::byte*>(std::aligned_alloc(kAlign, kBuffer)));
}

// finish_piece through a given buffer.
fs::path finish_with(const PieceJob& job, const WriteBuffer& buffer);

// The file's bytes in order, the holes taken from the lent memory, one buffer at a time.
class Composer {
 public:
  Composer(const PieceJob& job, int in, std::uint64_t size) : job_(job), in_(in), size_(size) {
    lent_ = job.lent;
    std::sort(lent_.begin(), lent_.end(),
              [](const LentBytes& a, const LentBytes& b) { return a.offset < b.offset; });
    for (const LentBytes& l : lent_)
      if (l.offset + l.bytes.size() > size_)
        throw InternalError(job.temp.string() + ": lent bytes reach past the end of the file");
  }
  // Bytes [at, at + n) into `out`.
  void fill(std::uint64_t at, std::size_t n, std::byte* out) {
    const std::uint64_t end = at + n;
    while (at < end) {
      while (next_ < lent_.size() && lent_[next_].offset + lent_[next_].bytes.size() <= at) ++next_;
      const std::uint64_t hole = next_ < lent_.size() ? lent_[next_].offset : size_;
      if (at < hole) {  // bytes the library wrote
        const auto take = static_cast<std::size_t>(std::min(end, hole) - at);
        read_file(at, take, out);
        at += take, out += take;
        continue;
      }
      const LentBytes& l = lent_[next_];
      const auto from = static_cast<std::size_t>(at - l.offset);
      const std::size_t take = std::min<std::size_t>(l.bytes.size() - from, end - at);
      std::memcpy(out, l.bytes.data() + from, take);
      at += take, out += take;
    }
  }

 private:
  void read_file(std::uint64_t at, std::size_t n, std::byte* out) {
    while (n > 0) {
      const ssize_t got = ::pread(in_, out, n, static_cast<off_t>(at));
      if (got < 0 && errno == EINTR) continue;
      if (got <= 0) throw IoError(why(job_.temp, "cannot read back what was written"));
      n -= static_cast<std::size_t>(got), out += got, at += static_cast<std::uint64_t>(got);
    }
  }
  const PieceJob& job_;
  int in_;
  std::uint64_t size_;
  std::vector<LentBytes> lent_;
  std::size_t next_ = 0;
};

void write_all(int fd, const std::byte* data, std::size_t n, std::uint64_t at,
               const fs::path& file) {
  while (n > 0) {
    const ssize_t put = ::pwrite(fd, data, n, static_cast<off_t>(at));
    if (put < 0 && errno == EINTR) continue;
    if (put <= 0) throw IoError(why(file, "write failed"));
    n -= static_cast<std::size_t>(put), data += put, at += static_cast<std::uint64_t>(put);
  }
}

// Writes the whole file again from the composer (the library's bytes unchanged, the holes
// filled), directly to the device where the file system allows it; returns the checksum.
std::uint64_t rewrite(const PieceJob& job, Composer& bytes, std::uint64_t size,
                      const WriteBuffer& buffer) {
  if (!buffer) throw IoError(job.temp.string() + ": no memory for the write buffer");
  int flags = O_WRONLY | O_CLOEXEC | O_DIRECT;
  Fd out(::open(job.temp.c_str(), flags));
  if (out.get() < 0 && errno == EINVAL) {  // tmpfs and some others: no direct I/O
    flags &= ~O_DIRECT;
    out.reset(::open(job.temp.c_str(), flags));
  }
  if (out.get() < 0) throw IoError(why(job.temp, "cannot open to write"));
  Checksum sum;
  for (std::uint64_t at = 0; at < size; at += kBuffer) {
    const auto n = static_cast<std::size_t>(std::min<std::uint64_t>(kBuffer, size - at));
    bytes.fill(at, n, buffer.get());
    sum.update(std::span<const std::byte>(buffer.get(), n));
    if (!(flags & O_DIRECT)) {
      write_all(out.get(), buffer.get(), n, at, job.temp);
      continue;
    }
    // The last block padded; the file is cut back to its size below.
    const std::size_t put = (n + kAlign - 1) / kAlign * kAlign;
    std::memset(buffer.get() + n, 0, put - n);
    ssize_t once;
    do once = ::pwrite(out.get(), buffer.get(), put, static_cast<off_t>(at));
    while (once < 0 && errno == EINTR);
    if (once < 0 && errno == EINVAL) {  // refused after all: write buffered
      flags &= ~O_DIRECT;
      out.reset(::open(job.temp.c_str(), flags));
      if (out.get() < 0) throw IoError(why(job.temp, "cannot open to write"));
      write_all(out.get(), buffer.get(), n, at, job.temp);
    } else if (once < 0) {
      throw IoError(why(job.temp, "write failed"));
    } else if (static_cast<std::size_t>(once) != put) {
      errno = ENOSPC;  // a short write: the device took no more
      throw IoError(why(job.temp, "write failed"));
    }
  }
  if (::ftruncate(out.get(), static_cast<off_t>(size)) != 0)
    throw IoError(why(job.temp, "cannot set the size"));
  if (!out.close()) throw IoError(why(job.temp, "closing failed"));
  return sum.value();
}

}  // namespace

fs::path finish_piece(const PieceJob& job) {
  return finish_with(job, write_buffer());
}

namespace {

fs::path finish_with(const PieceJob& job, const WriteBuffer& buffer) {
  Fd in(::open(job.temp.c_str(), O_RDONLY | O_CLOEXEC));
  struct stat st {};
  if (in.get() < 0 || ::fstat(in.get(), &st) != 0)
    throw IoError(why(job.temp, "cannot open what was written"));
  const auto size = static_cast<std::uint64_t>(st.st_size);
  Composer bytes(job, in.get(), size);
  const std::uint64_t sum = rewrite(job, bytes, size, buffer);
  const fs::path target = job.folder / (job.step + "." + hex16(sum) + ".h5");
  fs::rename(job.temp, target);  // throws filesystem_error, an std::exception
  std::error_code ec;
  for (const auto& entry : fs::directory_iterator(job.folder, ec)) {
    std::string step, other;
    if (entry.path() != target && split_piece_name(entry.path().filename().string(), step, other) &&
        step == job.step)
      fs::remove(entry.path(), ec);
  }
  return target;
}

}  // namespace

PieceWriter::~PieceWriter() {
  drain();
  {
    const std::lock_guard<std::mutex> lock(mutex_);
    closing_ = true;
  }
  changed_.notify_all();
  if (thread_.joinable()) thread_.join();
}

void PieceWriter::submit(PieceJob job) {
  {
    const std::lock_guard<std::mutex> lock(mutex_);
    // Started before the job is queued: if it cannot start, nothing is left for drain().
    if (!thread_.joinable()) thread_ = std::thread([this] { run(); });
    queue_.push_back(std::move(job));
  }
  changed_.notify_all();
}

std::vector<PieceOutcome> PieceWriter::drain() {
  std::unique_lock<std::mutex> lock(mutex_);
  changed_.wait(lock, [this] { return queue_.empty() && !busy_; });
  return std::exchange(outcomes_, {});
}

std::vector<PieceOutcome> PieceWriter::finished() {
  const std::lock_guard<std::mutex> lock(mutex_);
  return std::exchange(outcomes_, {});
}

void PieceWriter::run() {
  const WriteBuffer buffer = write_buffer();
  std::unique_lock<std::mutex> lock(mutex_);
  for (;;) {
    changed_.wait(lock, [this] { return closing_ || !queue_.empty(); });
    if (queue_.empty()) return;  // closing, nothing left
    PieceJob job = std::move(queue_.front());
    queue_.pop_front();
    busy_ = true;
    const bool skip = failed_;
    lock.unlock();
    PieceOutcome outcome;
    outcome.step = job.step;
    try {
      if (skip) {
        outcome.kind = PieceOutcome::Kind::skipped;
      } else {
        outcome.file = finish_with(job, buffer);
      }
    } catch (const std::exception& e) {
      outcome.kind = PieceOutcome::Kind::unsaved;
      outcome.error = e.what();
    }
    if (outcome.kind != PieceOutcome::Kind::saved) {
      std::error_code ec;
      fs::remove(job.temp, ec);
    }
    lock.lock();
    failed_ = failed_ || outcome.kind == PieceOutcome::Kind::unsaved;
    outcomes_.push_back(std::move(outcome));
    busy_ = false;
    changed_.notify_all();
  }
}

}  // namespace unfurl::io::detail
