#include "apps/run_info.hpp"

#include <sys/resource.h>
#include <unistd.h>

#include <chrono>

#include <fmt/core.h>

#include "io/hdf5_file.hpp"
#include "io/map_file.hpp"

namespace unfurl::app {

std::uint64_t peak_memory_bytes() {
  rusage usage{};
  getrusage(RUSAGE_SELF, &usage);
  return static_cast<std::uint64_t>(usage.ru_maxrss) * 1024;  // Linux reports KiB
}

std::string human_bytes(std::uint64_t bytes) {
  const char* units[] = {"B", "KiB", "MiB", "GiB", "TiB"};
  double v = static_cast<double>(bytes);
  int u = 0;
  while (v >= 1024.0 && u < 4) {
    v /= 1024.0;
    ++u;
  }
  return u == 0 ? fmt::format("{} B", bytes) : fmt::format("{:.1f} {}", v, units[u]);
}

nlohmann::json point_input_identity(const std::filesystem::path& file,
                                    const io::PointReadResult& read) {
  nlohmann::json identity = io::input_identity(file, read.dataset);
  identity["file_rows"] = read.file_rows;
  identity["columns"] = read.points.cols;
  // "modified" holds whole seconds; two files written within one second differ here.
  std::error_code ec;
  const auto modified = std::filesystem::last_write_time(file, ec);
  if (!ec)
    identity["modified_unix_ns"] = std::chrono::duration_cast<std::chrono::nanoseconds>(
                                       std::chrono::file_clock::to_sys(modified).time_since_epoch())
                                       .count();
  return identity;
}

std::uint64_t default_memory_limit() {
  const long pages = sysconf(_SC_PHYS_PAGES);
  const long page = sysconf(_SC_PAGE_SIZE);
  if (pages <= 0 || page <= 0) return std::uint64_t{16} << 30;
  return static_cast<std::uint64_t>(pages) * static_cast<std::uint64_t>(page) / 5 * 4;
}
bool is_unfurl_map(const std::filesystem::path& file) {
  if (io::detect_point_format(file) != "hdf5") return false;
  const io::H5Reader r(file);
  return r.has_dataset("/coords") && r.has_dataset("/rows") &&
         r.has_attribute("/", "format_version");
}

}  // namespace unfurl::app
