#include "io/detail/hdf5_sandbox.hpp"

#include <fcntl.h>
#include <hdf5.h>
#include <poll.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <atomic>
#include <cerrno>
#include <chrono>
#include <csignal>
#include <cstdlib>
#include <cstring>
#include <span>
#include <string>
#include <vector>

#include "engine/error.hpp"
#include "io/detail/hdf5.hpp"
#include "io/detail/hdf5_attributes.hpp"

namespace unfurl::io::detail {
namespace {

// Walks the chunk index by coordinates: a B-tree lookup per chunk. (Asking by index instead
// costs a scan per chunk, quadratic in the count.) Grids beyond kMaxWalkedChunks are walked
// in part; their size is refused later by the declared-size guard unless the file is big.
constexpr hsize_t kMaxWalkedChunks = hsize_t{1} << 20;  // common practice, no source

void walk_chunks(hid_t set, hid_t space, hid_t dcpl) {
  const std::vector<hsize_t> dims = dataspace_dims(space, "");
  std::vector<hsize_t> chunk(dims.size());
  if (dims.empty() || H5Pget_chunk(dcpl, static_cast<int>(chunk.size()), chunk.data()) !=
                          static_cast<int>(dims.size()))
    return;
  for (hsize_t c : chunk)
    if (c == 0) return;
  std::vector<hsize_t> offset(dims.size(), 0);
  for (hsize_t walked = 0; walked < kMaxWalkedChunks; ++walked) {
    unsigned mask = 0;
    haddr_t addr = 0;
    hsize_t bytes = 0;
    H5Dget_chunk_info_by_coord(set, offset.data(), &mask, &addr, &bytes);
    std::size_t d = dims.size();  // next grid cell, last dimension fastest
    while (d > 0) {
      --d;
      offset[d] += chunk[d];
      if (offset[d] < dims[d]) break;
      offset[d] = 0;
      if (d == 0) return;
    }
  }
}

// What the parent does to an object: render its attributes as inspect does, read the type,
// shape, layout, filters, storage size and chunk index of a dataset.
void walk_object(hid_t object) {
  (void)attribute_texts(object);
  if (H5Iget_type(object) != H5I_DATASET) return;
  Hid type(H5Dget_type(object));
  Hid space(H5Dget_space(object));
  Hid dcpl(H5Dget_create_plist(object));
  if (!type || !space || !dcpl) return;
  (void)hdf5_type_name(type.get());
  (void)is_plain_numeric_type(type.get());
  (void)dataset_filters(dcpl.get());
  H5Dget_storage_size(object);
  if (H5Pget_layout(dcpl.get()) == H5D_CHUNKED) {
    hsize_t chunks = 0;
    H5Dget_num_chunks(object, space.get(), &chunks);
    walk_chunks(object, space.get(), dcpl.get());
  }
}

// Walks one file's metadata (in the child).
void walk_file(const std::filesystem::path& file) {
  Hid fapl(H5Pcreate(H5P_FILE_ACCESS));
  if (fapl) H5Pset_file_locking(fapl.get(), 0, 1);
  const hid_t f = H5Fopen(file.c_str(), H5F_ACC_RDONLY, fapl.get());
  try {
    if (f >= 0) {
      Hid root(H5Oopen(f, "/", H5P_DEFAULT));
      if (root) walk_object(root.get());
      for (const std::string& path : visit_datasets(f, "/", "")) {
        Hid object(H5Oopen(f, path.c_str(), H5P_DEFAULT));
        if (object) walk_object(object.get());
      }
    }
  } catch (...) {
    // A library error the parent meets again and reports with its own message (an
    // unreadable listing or dataspace); only a crash or a stall is this walk's business.
  }
  if (f >= 0) H5Fclose(f);
}

[[noreturn]] void walk_and_exit(std::span<const std::filesystem::path> files) {
  // Die of the signal itself, silently: a crash handler inherited from the parent (a test
  // framework's, a sanitizer's) would print a report for what is only a damaged file.
  for (int sig : {SIGSEGV, SIGBUS, SIGFPE, SIGILL, SIGABRT}) std::signal(sig, SIG_DFL);
  H5Eset_auto2(H5E_DEFAULT, nullptr, nullptr);
  for (const std::filesystem::path& file : files) walk_file(file);
  ::_exit(0);  // no destructors, no atexit handlers: the parent owns all of that
}

// UNFURL_HDF5_CHECK_SECONDS overrides the default time limit (slow network disks; tests of
// damaged files lower it).
double default_timeout() {
  const char* text = std::getenv("UNFURL_HDF5_CHECK_SECONDS");
  if (text != nullptr) {
    char* end = nullptr;
    const double v = std::strtod(text, &end);
    if (end != text && *end == '\0' && v > 0 && v <= 86400) return v;
  }
  return 10.0;
}

std::atomic<double> g_timeout_seconds{default_timeout()};

}  // namespace

void set_hdf5_check_timeout(double seconds) {
  g_timeout_seconds.store(seconds);
}

namespace {

// How a walk in a child ended.
struct WalkEnd {
  enum class Kind { finished, not_isolated, timed_out, crashed, failed } kind = Kind::finished;
  int code = 0;  // the signal (crashed) or the exit status (failed)
};

// Forks a child that walks `files` in turn and waits for it, up to `timeout` seconds.
// InterruptedError when `stop` is requested while waiting (the child is killed).
WalkEnd walk_in_child(std::span<const std::filesystem::path> files, double timeout,
                      const StopToken& stop) {
  // The child holds the write end of a pipe; its exit closes it, which wakes poll() at once.
  int pipe_ends[2];
  if (::pipe2(pipe_ends, O_CLOEXEC) != 0) return {WalkEnd::Kind::not_isolated};
  const pid_t child = ::fork();
  if (child < 0) {
    ::close(pipe_ends[0]);
    ::close(pipe_ends[1]);
    return {WalkEnd::Kind::not_isolated};
  }
  if (child == 0) {
    ::close(pipe_ends[0]);
    walk_and_exit(files);
  }
  ::close(pipe_ends[1]);
  const auto deadline = std::chrono::steady_clock::now() + std::chrono::duration<double>(timeout);
  bool finished = false;
  for (;;) {
    const auto left = std::chrono::duration_cast<std::chrono::milliseconds>(
                          deadline - std::chrono::steady_clock::now())
                          .count();
    if (left <= 0) break;
    pollfd p{pipe_ends[0], POLLIN, 0};
    const int r = ::poll(&p, 1, static_cast<int>(std::min<long long>(left, 1000)));
    if (r > 0) {
      finished = true;
      break;
    }
    if ((r < 0 && errno != EINTR) || stop.requested()) break;
  }
  ::close(pipe_ends[0]);
  if (!finished) ::kill(child, SIGKILL);
  int status = 0;
  while (::waitpid(child, &status, 0) < 0) {
    if (errno != EINTR) return {WalkEnd::Kind::not_isolated};
  }
  stop.check("checking the HDF5 file");
  if (!finished) return {WalkEnd::Kind::timed_out};
  // The walk exits 0 whatever the library reports; anything else is a crash (a signal, or a
  // sanitizer's exit in instrumented builds).
  if (WIFSIGNALED(status)) return {WalkEnd::Kind::crashed, WTERMSIG(status)};
  if (!WIFEXITED(status) || WEXITSTATUS(status) != 0)
    return {WalkEnd::Kind::failed, WEXITSTATUS(status)};
  return {};
}

}  // namespace

void check_hdf5_in_child(const std::filesystem::path& file, const StopToken& stop) {
  const double timeout = g_timeout_seconds.load();
  const WalkEnd end = walk_in_child(std::span(&file, 1), timeout, stop);
  switch (end.kind) {
    case WalkEnd::Kind::finished:
    case WalkEnd::Kind::not_isolated:  // cannot isolate: the checked read follows
      return;
    case WalkEnd::Kind::timed_out:
      throw IoError(file.string() + ": damaged HDF5 file: reading its metadata did not finish " +
                    "within " + std::to_string(static_cast<int>(timeout)) + " s");
    case WalkEnd::Kind::crashed:
      throw IoError(file.string() + ": damaged HDF5 file: reading its metadata crashed the HDF5 " +
                    "library (signal " + std::to_string(end.code) + ")");
    case WalkEnd::Kind::failed:
      throw IoError(file.string() + ": damaged HDF5 file: reading its metadata failed inside the " +
                    "HDF5 library (exit " + std::to_string(end.code) + ")");
  }
}

bool check_hdf5_files_in_child(std::span<const std::filesystem::path> files,
                               const StopToken& stop) {
  if (files.empty()) return true;
  const double timeout = g_timeout_seconds.load() * static_cast<double>(files.size());
  return walk_in_child(files, timeout, stop).kind == WalkEnd::Kind::finished;
}

}  // namespace unfurl::io::detail
