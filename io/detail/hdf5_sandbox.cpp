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
#include <cstring>
#include <string>
#include <vector>

#include "engine/error.hpp"
#include "io/detail/hdf5.hpp"

namespace unfurl::io::detail {
namespace {

// Reads one attribute's value in its own memory form, which is what touches the global heap
// for variable-length strings.
herr_t walk_attribute(hid_t object, const char* name, const H5A_info_t*, void*) {
  Hid attr(H5Aopen(object, name, H5P_DEFAULT));
  if (!attr) return 0;
  Hid type(H5Aget_type(attr.get()));
  Hid space(H5Aget_space(attr.get()));
  if (!type || !space) return 0;
  const hssize_t n = H5Sget_simple_extent_npoints(space.get());
  if (n <= 0 || n > (1 << 20)) return 0;
  Hid memory(H5Tget_native_type(type.get(), H5T_DIR_DEFAULT));
  if (!memory) return 0;
  const std::size_t size = H5Tget_size(memory.get());
  if (size == 0 || size > (1 << 20)) return 0;
  std::vector<unsigned char> buf(static_cast<std::size_t>(n) * size + 16);
  if (H5Aread(attr.get(), memory.get(), buf.data()) >= 0)
    H5Dvlen_reclaim(memory.get(), space.get(), H5P_DEFAULT, buf.data());
  return 0;
}

void walk_object(hid_t object) {
  hsize_t index = 0;
  H5Aiterate2(object, H5_INDEX_NAME, H5_ITER_INC, &index, walk_attribute, nullptr);
  if (H5Iget_type(object) != H5I_DATASET) return;
  Hid type(H5Dget_type(object));
  Hid space(H5Dget_space(object));
  Hid dcpl(H5Dget_create_plist(object));
  if (!space || !dcpl) return;
  H5Dget_storage_size(object);
  if (H5Pget_layout(dcpl.get()) == H5D_CHUNKED) {
    // Walk the chunk index (a B-tree in files of the older format).
    hsize_t chunks = 0;
    if (H5Dget_num_chunks(object, space.get(), &chunks) < 0) return;
    for (hsize_t c = 0; c < chunks; ++c) {
      unsigned mask = 0;
      haddr_t addr = 0;
      hsize_t bytes = 0;
      std::vector<hsize_t> offset(32);
      if (H5Dget_chunk_info(object, space.get(), c, offset.data(), &mask, &addr, &bytes) < 0)
        return;
    }
  }
}

herr_t walk_link(hid_t group, const char* name, const H5L_info_t* info, void*) {
  if (info->type != H5L_TYPE_HARD) return 0;
  Hid object(H5Oopen(group, name, H5P_DEFAULT));
  if (object) walk_object(object.get());
  return 0;
}

[[noreturn]] void walk_and_exit(const std::filesystem::path& file) {
  H5Eset_auto2(H5E_DEFAULT, nullptr, nullptr);
  Hid fapl(H5Pcreate(H5P_FILE_ACCESS));
  if (fapl) H5Pset_file_locking(fapl.get(), 0, 1);
  const hid_t f = H5Fopen(file.c_str(), H5F_ACC_RDONLY, fapl.get());
  if (f >= 0) {
    Hid root(H5Gopen2(f, "/", H5P_DEFAULT));
    if (root) {
      walk_object(root.get());
      H5Lvisit(root.get(), H5_INDEX_NAME, H5_ITER_INC, walk_link, nullptr);
    }
  }
  ::_exit(0);  // no destructors, no atexit handlers: the parent owns all of that
}

std::atomic<double> g_timeout_seconds{30.0};

}  // namespace

void set_hdf5_check_timeout(double seconds) {
  g_timeout_seconds.store(seconds);
}

void check_hdf5_in_child(const std::filesystem::path& file) {
  const double timeout = g_timeout_seconds.load();
  // The child holds the write end of a pipe; its exit closes it, which wakes poll() at once.
  int pipe_ends[2];
  if (::pipe2(pipe_ends, O_CLOEXEC) != 0) return;  // cannot isolate: the checked read follows
  const pid_t child = ::fork();
  if (child < 0) {
    ::close(pipe_ends[0]);
    ::close(pipe_ends[1]);
    return;
  }
  if (child == 0) {
    ::close(pipe_ends[0]);
    walk_and_exit(file);
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
    if (r < 0 && errno != EINTR) break;
  }
  ::close(pipe_ends[0]);
  if (!finished) ::kill(child, SIGKILL);
  int status = 0;
  while (::waitpid(child, &status, 0) < 0) {
    if (errno != EINTR) return;
  }
  if (!finished)
    throw IoError(file.string() + ": damaged HDF5 file: reading its metadata did not finish " +
                  "within " + std::to_string(static_cast<int>(timeout)) + " s");
  // The walk exits 0 whatever the library reports; anything else is a crash (a signal, or a
  // sanitizer's exit in instrumented builds).
  if (WIFSIGNALED(status))
    throw IoError(file.string() + ": damaged HDF5 file: reading its metadata crashed the HDF5 " +
                  "library (signal " + std::to_string(WTERMSIG(status)) + ")");
  if (!WIFEXITED(status) || WEXITSTATUS(status) != 0)
    throw IoError(file.string() + ": damaged HDF5 file: reading its metadata failed inside the " +
                  "HDF5 library (exit " + std::to_string(WEXITSTATUS(status)) + ")");
}

}  // namespace unfurl::io::detail
