#include "apps/run_info.hpp"

#include <sys/resource.h>
#include <sys/stat.h>
#include <unistd.h>

#include <array>
#include <ctime>

#include <fmt/core.h>

namespace unfurl::app {
namespace {

std::string iso8601(std::time_t t) {
  std::tm tm{};
  gmtime_r(&t, &tm);
  std::array<char, 32> buf{};
  std::strftime(buf.data(), buf.size(), "%Y-%m-%dT%H:%M:%SZ", &tm);
  return buf.data();
}

}  // namespace

std::uint64_t peak_memory_bytes() {
  rusage usage{};
  getrusage(RUSAGE_SELF, &usage);
  return static_cast<std::uint64_t>(usage.ru_maxrss) * 1024;  // Linux reports KiB
}

std::string host_name() {
  std::array<char, 256> buf{};
  if (gethostname(buf.data(), buf.size() - 1) != 0) return "unknown";
  return buf.data();
}

std::string utc_now_iso8601() {
  return iso8601(std::time(nullptr));
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

FileIdentity identify_file(const std::filesystem::path& path) {
  FileIdentity id;
  std::error_code ec;
  id.path = std::filesystem::absolute(path, ec).string();
  if (ec) id.path = path.string();
  struct stat st {};
  if (::stat(path.c_str(), &st) == 0) {
    id.bytes = static_cast<std::uint64_t>(st.st_size);
    id.modified = iso8601(st.st_mtime);
  }
  return id;
}

}  // namespace unfurl::app
