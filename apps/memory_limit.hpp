// The memory a run may use when --max-memory is not given: the memory available now
// (MemAvailable in /proc/meminfo), or the memory limit of the control group the process runs
// in when one is set (cgroup v2 memory.max, cgroup v1 memory.limit_in_bytes, on the process's
// own group and every group above it); the smallest of these wins. Batch schedulers and
// containers set such limits; a run over them is killed by the kernel, not refused.
//
// File formats (Linux kernel documentation; from memory):
// - /proc/meminfo (Documentation/filesystems/proc.rst): lines "MemAvailable:   11385212 kB".
// - /proc/self/cgroup (Documentation/admin-guide/cgroup-v2.rst, "Processes"; cgroup-v1):
//   "hierarchy-ID:controller-list:cgroup-path" per line; the v2 line is "0::/path", a v1
//   memory line names "memory" in its controller list.
// - memory.max (cgroup-v2.rst, "Memory Interface Files"): a single value, "max" (no limit,
//   the default) or a number of bytes.
// - memory.limit_in_bytes (cgroup-v1/memory.rst): a number of bytes; no limit reads as a
//   huge number (9223372036854771712 on x86-64), which loses to any real figure.
#pragma once

#include <cstdint>
#include <filesystem>
#include <optional>
#include <string>
#include <string_view>

namespace unfurl::app {

// Bytes of MemAvailable in the text of /proc/meminfo; nothing when the line is missing.
std::optional<std::uint64_t> meminfo_available(std::string_view meminfo);

// A cgroup limit file's value (memory.max or memory.limit_in_bytes): bytes, or nothing for
// "max" and for text that is not a whole number.
std::optional<std::uint64_t> cgroup_limit_value(std::string_view text);

// The process's groups from the text of /proc/self/cgroup.
struct CgroupPaths {
  std::optional<std::string> unified;  // v2: the path of the "0::" line
  std::optional<std::string> memory;   // v1: the path of the line whose controllers hold memory
};
CgroupPaths cgroup_paths(std::string_view self_cgroup);

// Where the files are read from (a test points these at sample files).
struct SystemFiles {
  std::filesystem::path meminfo = "/proc/meminfo";
  std::filesystem::path self_cgroup = "/proc/self/cgroup";
  std::filesystem::path cgroup_root = "/sys/fs/cgroup";  // v2 here or in unified/, v1 in memory/
};

struct MemoryCeiling {
  std::uint64_t bytes = 0;
  std::string source;  // "the available memory, MemAvailable", "the cgroup limit in FILE", ...
};

// The smallest of MemAvailable and every cgroup limit found; 80% of the physical memory
// when none of the files can be read.
MemoryCeiling system_memory_ceiling(const SystemFiles& files = {});

}  // namespace unfurl::app
