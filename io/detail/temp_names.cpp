#include "io/detail/temp_names.hpp"

#include <dirent.h>
#include <fcntl.h>
#include <signal.h>
#include <sys/stat.h>
#include <unistd.h>

#include <atomic>
#include <cerrno>
#include <climits>
#include <cstdint>
#include <cstdio>
#include <memory>
#include <string>
#include <string_view>
#include <vector>

namespace unfurl::io::detail {
namespace {

namespace fs = std::filesystem;

constexpr std::string_view temp_marker = ".part-";

// This host's name, hashed (FNV-1a) to 8 hex digits: temporary files in a folder shared
// between hosts are only judged by processes of the host that made them.
const std::string& host_tag() {
  static const std::string tag = [] {
    char host[HOST_NAME_MAX + 1] = {};
    if (::gethostname(host, sizeof host - 1) != 0) host[0] = '\0';
    std::uint32_t h = 2166136261u;
    for (const char* c = host; *c; ++c) h = (h ^ static_cast<unsigned char>(*c)) * 16777619u;
    char hex[9];
    std::snprintf(hex, sizeof hex, "%08x", h);
    return std::string(hex);
  }();
  return tag;
}

bool all_of(std::string_view s, const char* set) {
  return !s.empty() && s.find_first_not_of(set) == std::string_view::npos;
}

// The host tag and pid of a temporary name, or false when `name` is not one. The older
// form without a host tag is taken as this host's.
bool parse_temp_name(std::string_view name, std::string& host, long& pid) {
  const auto at = name.rfind(temp_marker);
  if (name.empty() || name[0] != '.' || at == std::string_view::npos || at < 1) return false;
  std::string_view rest = name.substr(at + temp_marker.size());
  std::vector<std::string_view> parts;
  for (std::size_t from = 0;;) {
    const auto dash = rest.find('-', from);
    parts.push_back(rest.substr(from, dash == std::string_view::npos ? dash : dash - from));
    if (dash == std::string_view::npos) break;
    from = dash + 1;
  }
  std::string_view pid_text;
  if (parts.size() == 3 && parts[0].size() == 8 && all_of(parts[0], "0123456789abcdef") &&
      all_of(parts[1], "0123456789") && all_of(parts[2], "0123456789")) {
    host = parts[0];
    pid_text = parts[1];
  } else if (parts.size() == 2 && all_of(parts[0], "0123456789") &&
             all_of(parts[1], "0123456789")) {
    host = host_tag();
    pid_text = parts[0];
  } else {
    return false;
  }
  if (pid_text.size() > 9) return false;
  pid = std::stol(std::string(pid_text));
  return pid > 0;
}

bool process_gone(long pid) {
  return ::kill(static_cast<pid_t>(pid), 0) != 0 && errno == ESRCH;
}

}  // namespace

fs::path temp_name_for(const fs::path& target) {
  static std::atomic<unsigned> counter{0};
  // Built with append, not operator+: GCC 12 gives a false -Wrestrict on the latter.
  std::string suffix(temp_marker);
  suffix.append(host_tag())
      .append("-")
      .append(std::to_string(::getpid()))
      .append("-")
      .append(std::to_string(counter++));
  const fs::path parent = target.parent_path();
  const fs::path folder = parent.empty() ? fs::path(".") : parent;
  long name_max = ::pathconf(folder.c_str(), _PC_NAME_MAX);
  if (name_max <= 0) name_max = NAME_MAX;
  std::string base = target.filename().string();
  const std::size_t room = static_cast<std::size_t>(name_max) - 1 - suffix.size();
  if (base.size() > room) {
    base.resize(room);
    // Cut at a character boundary of UTF-8 text.
    while (!base.empty() && (static_cast<unsigned char>(base.back()) & 0xC0) == 0x80)
      base.pop_back();
    if (!base.empty() && (static_cast<unsigned char>(base.back()) & 0x80)) base.pop_back();
  }
  std::string name = ".";
  name.append(base).append(suffix);
  return folder / name;
}

std::size_t remove_stale_temporaries(const fs::path& folder) {
  const std::unique_ptr<DIR, int (*)(DIR*)> dir(::opendir(folder.c_str()), ::closedir);
  if (!dir) return 0;
  const int dfd = ::dirfd(dir.get());
  const long self = ::getpid();
  std::size_t removed = 0;
  while (const dirent* entry = ::readdir(dir.get())) {
    std::string host;
    long pid = 0;
    if (!parse_temp_name(entry->d_name, host, pid)) continue;
    if (host != host_tag() || pid == self || !process_gone(pid)) continue;
    struct stat st;
    if (::fstatat(dfd, entry->d_name, &st, AT_SYMLINK_NOFOLLOW) != 0 || !S_ISREG(st.st_mode) ||
        st.st_uid != ::geteuid())
      continue;
    if (::unlinkat(dfd, entry->d_name, 0) == 0) ++removed;
  }
  return removed;
}

}  // namespace unfurl::io::detail
