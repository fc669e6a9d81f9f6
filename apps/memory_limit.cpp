#include "apps/memory_limit.hpp"

#include <unistd.h>

#include <fstream>
#include <sstream>
#include <vector>

namespace unfurl::app {
namespace {

std::string_view trimmed(std::string_view s) {
  const auto first = s.find_first_not_of(" \t\r\n");
  if (first == s.npos) return {};
  return s.substr(first, s.find_last_not_of(" \t\r\n") - first + 1);
}

std::optional<std::uint64_t> whole_number(std::string_view s) {
  if (s.empty() || s.size() > 20) return std::nullopt;
  std::uint64_t value = 0;
  for (const char c : s) {
    if (c < '0' || c > '9') return std::nullopt;
    const auto digit = static_cast<std::uint64_t>(c - '0');
    if (value > (UINT64_MAX - digit) / 10) return std::nullopt;
    value = value * 10 + digit;
  }
  return value;
}

std::optional<std::string> file_text(const std::filesystem::path& file) {
  std::ifstream in(file);
  if (!in) return std::nullopt;
  std::ostringstream text;
  text << in.rdbuf();
  return text.str();
}

// Every line of `text` in turn.
template <class Visit>
void for_each_line(std::string_view text, Visit visit) {
  while (!text.empty()) {
    const auto end = text.find('\n');
    visit(text.substr(0, end));
    if (end == text.npos) break;
    text.remove_prefix(end + 1);
  }
}

// The group at `path` under `root` and every group above it (a parent's limit binds its
// children too), down to `root` itself.
std::vector<std::filesystem::path> group_and_parents(const std::filesystem::path& root,
                                                     const std::string& path) {
  std::vector<std::filesystem::path> out;
  std::filesystem::path relative = std::filesystem::path(path).relative_path();
  while (true) {
    out.push_back(root / relative);
    if (relative.empty()) break;
    relative = relative.parent_path();
  }
  return out;
}

}  // namespace

std::optional<std::uint64_t> meminfo_available(std::string_view meminfo) {
  std::optional<std::uint64_t> bytes;
  for_each_line(meminfo, [&](std::string_view line) {
    constexpr std::string_view key = "MemAvailable:";
    if (line.substr(0, key.size()) != key) return;
    std::string_view rest = trimmed(line.substr(key.size()));
    const auto unit = rest.find(' ');
    const auto kib = whole_number(rest.substr(0, unit));
    if (!kib || *kib > UINT64_MAX / 1024) return;
    if (unit != rest.npos && trimmed(rest.substr(unit)) != "kB") return;
    bytes = *kib * 1024;
  });
  return bytes;
}

std::optional<std::uint64_t> cgroup_limit_value(std::string_view text) {
  return whole_number(trimmed(text));  // "max" is no number: no limit
}

CgroupPaths cgroup_paths(std::string_view self_cgroup) {
  CgroupPaths out;
  for_each_line(self_cgroup, [&](std::string_view line) {
    const auto first = line.find(':');
    const auto second = first == line.npos ? line.npos : line.find(':', first + 1);
    if (second == line.npos) return;
    const std::string_view id = line.substr(0, first);
    const std::string_view controllers = line.substr(first + 1, second - first - 1);
    const std::string path(trimmed(line.substr(second + 1)));
    if (id == "0" && controllers.empty()) {
      out.unified = path;
      return;
    }
    std::string_view list = controllers;
    while (!list.empty()) {
      const auto comma = list.find(',');
      if (list.substr(0, comma) == "memory") out.memory = path;
      if (comma == list.npos) break;
      list.remove_prefix(comma + 1);
    }
  });
  return out;
}

MemoryCeiling system_memory_ceiling(const SystemFiles& files) {
  MemoryCeiling best;
  auto consider = [&](std::optional<std::uint64_t> bytes, std::string source) {
    if (bytes && *bytes > 0 && (best.bytes == 0 || *bytes < best.bytes))
      best = {*bytes, std::move(source)};
  };
  if (const auto meminfo = file_text(files.meminfo))
    consider(meminfo_available(*meminfo), "the available memory, MemAvailable");
  if (const auto self = file_text(files.self_cgroup)) {
    const CgroupPaths paths = cgroup_paths(*self);
    auto limits = [&](const std::filesystem::path& root, const std::string& path,
                      const char* file) {
      for (const auto& group : group_and_parents(root, path))
        if (const auto text = file_text(group / file))
          consider(cgroup_limit_value(*text), "the cgroup limit in " + (group / file).string());
    };
    if (paths.unified) {
      limits(files.cgroup_root, *paths.unified, "memory.max");              // cgroup v2 alone
      limits(files.cgroup_root / "unified", *paths.unified, "memory.max");  // hybrid layout
    }
    if (paths.memory) limits(files.cgroup_root / "memory", *paths.memory, "memory.limit_in_bytes");
  }
  if (best.bytes > 0) return best;
  const long pages = sysconf(_SC_PHYS_PAGES), page = sysconf(_SC_PAGE_SIZE);
  if (pages <= 0 || page <= 0) return {std::uint64_t{16} << 30, "16 GiB (memory size unknown)"};
  return {static_cast<std::uint64_t>(pages) * static_cast<std::uint64_t>(page) / 5 * 4,
          "80% of the physical memory"};
}

}  // namespace unfurl::app
