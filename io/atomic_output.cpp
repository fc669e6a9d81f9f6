#include "io/atomic_output.hpp"

#include <fcntl.h>
#include <unistd.h>

#include <atomic>
#include <cerrno>
#include <cstring>
#include <string>

#include "engine/error.hpp"

namespace unfurl::io {
namespace {

namespace fs = std::filesystem;

void fsync_path(const fs::path& p, int flags) {
  const int fd = ::open(p.c_str(), flags);
  if (fd < 0) throw IoError(p.string() + ": cannot open to flush: " + std::strerror(errno));
  const int rc = ::fsync(fd);
  const int err = errno;
  ::close(fd);
  if (rc != 0) throw IoError(p.string() + ": flush to disk failed: " + std::strerror(err));
}

}  // namespace

AtomicOutput::AtomicOutput(fs::path final_path) : final_(std::move(final_path)) {
  if (final_.empty()) throw OutputError("output path is empty");
  fs::path folder = final_.parent_path();
  if (folder.empty()) folder = ".";
  std::error_code ec;
  if (!fs::is_directory(folder, ec))
    throw OutputError(final_.string() + ": folder " + folder.string() + " does not exist");
  if (fs::is_directory(final_, ec))
    throw OutputError(final_.string() + ": is a folder, not a file name");
  if (::access(folder.c_str(), W_OK) != 0)
    throw OutputError(final_.string() + ": folder " + folder.string() + " is not writable");
  static std::atomic<unsigned> counter{0};
  // Built by appending: GCC 12 warns falsely (-Wrestrict) on "." + std::string.
  std::string name = ".";
  name += final_.filename().string();
  name += ".part-" + std::to_string(::getpid()) + "-" + std::to_string(counter++);
  temp_ = folder / name;
}

AtomicOutput::~AtomicOutput() {
  if (!committed_) {
    std::error_code ec;
    fs::remove(temp_, ec);
  }
}

void AtomicOutput::commit() {
  try {
    fsync_path(temp_, O_RDONLY);
    std::error_code ec;
    fs::rename(temp_, final_, ec);
    if (ec)
      throw IoError(final_.string() + ": cannot move finished output in place: " + ec.message());
    committed_ = true;
    fs::path folder = final_.parent_path();
    fsync_path(folder.empty() ? fs::path(".") : folder, O_RDONLY | O_DIRECTORY);
  } catch (...) {
    if (!committed_) {
      std::error_code ec;
      fs::remove(temp_, ec);
    }
    throw;
  }
}

}  // namespace unfurl::io
