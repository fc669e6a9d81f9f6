#include "apps/run_info.hpp"

#include <sys/resource.h>

#include <chrono>
#include <ctime>

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

namespace {

std::string text_of(const std::string& key, const nlohmann::json& v) {
  if (key == "modified_unix_ns" && v.is_number_integer()) {
    const std::int64_t ns = v.get<std::int64_t>();
    const std::time_t seconds = static_cast<std::time_t>(ns / 1000000000);
    std::tm tm{};
    gmtime_r(&seconds, &tm);
    return fmt::format("{:04}-{:02}-{:02}T{:02}:{:02}:{:02}.{:09}Z", tm.tm_year + 1900,
                       tm.tm_mon + 1, tm.tm_mday, tm.tm_hour, tm.tm_min, tm.tm_sec,
                       ns % 1000000000);
  }
  if (v.is_string()) return v.get<std::string>().empty() ? "(none)" : v.get<std::string>();
  return v.dump();
}

}  // namespace

std::string input_differences(const nlohmann::json& recorded, const nlohmann::json& now) {
  std::string out;
  for (const auto& [key, what] :
       {std::pair{"file_rows", "rows"}, std::pair{"columns", "columns"},
        std::pair{"bytes", "size in bytes"}, std::pair{"modified", "modified"},
        std::pair{"modified_unix_ns", "modified"}, std::pair{"dataset", "dataset"}}) {
    if (!recorded.contains(key) || !now.contains(key) || recorded[key] == now[key]) continue;
    if (std::string(key) == "modified_unix_ns" && out.find("modified") != std::string::npos)
      continue;  // the time is named once
    out += fmt::format("{}{} {} (the map records {})", out.empty() ? "" : ", ", what,
                       text_of(key, now[key]), text_of(key, recorded[key]));
  }
  return out;
}

}  // namespace unfurl::app
