// apps/memory_limit: the default --max-memory from /proc/meminfo and the cgroup limit files,
// read from sample files in the formats the Linux kernel documents (from memory):
// Documentation/filesystems/proc.rst (meminfo), Documentation/admin-guide/cgroup-v2.rst
// ("Processes": the "0::/path" line of /proc/PID/cgroup; "Memory Interface Files":
// memory.max holds "max" or a number of bytes) and Documentation/admin-guide/cgroup-v1/
// memory.rst (memory.limit_in_bytes, "hierarchy-ID:controllers:path" lines).
#include "apps/memory_limit.hpp"

#include <catch2/catch.hpp>
#include <fstream>

#include "tests/io/temp_folder.hpp"

namespace {

using unfurl::app::cgroup_limit_value;
using unfurl::app::cgroup_paths;
using unfurl::app::meminfo_available;
using unfurl::app::system_memory_ceiling;
using unfurl::app::SystemFiles;

// A meminfo excerpt in the kernel's layout (proc.rst's example lists these fields in this
// order, values in kB).
constexpr const char* kMeminfo =
    "MemTotal:       24555432 kB\n"
    "MemFree:         1021564 kB\n"
    "MemAvailable:   11385212 kB\n"
    "Buffers:          352100 kB\n";

void write(const std::filesystem::path& file, const std::string& text) {
  std::filesystem::create_directories(file.parent_path());
  std::ofstream(file) << text;
}

}  // namespace

TEST_CASE("MemAvailable is read in kB and returned in bytes", "[memory_limit]") {
  CHECK(meminfo_available(kMeminfo) == std::uint64_t{11385212} * 1024);
  CHECK_FALSE(meminfo_available("MemTotal: 24555432 kB\nMemFree: 1021564 kB\n"));
  CHECK_FALSE(meminfo_available("MemAvailable: lots kB\n"));
  CHECK_FALSE(meminfo_available("MemAvailable: 100 MB\n"));  // the kernel writes kB only
}

TEST_CASE("a cgroup limit file holds 'max' or a number of bytes", "[memory_limit]") {
  CHECK_FALSE(cgroup_limit_value("max\n"));  // cgroup-v2.rst: the default, no limit
  CHECK(cgroup_limit_value("8589934592\n") == std::uint64_t{8589934592});
  // cgroup v1 without a limit: the page counter's largest value, a multiple of the page size.
  CHECK(cgroup_limit_value("9223372036854771712\n") == std::uint64_t{9223372036854771712u});
  CHECK_FALSE(cgroup_limit_value(""));
  CHECK_FALSE(cgroup_limit_value("-1\n"));
  CHECK_FALSE(cgroup_limit_value("99999999999999999999999\n"));  // beyond 64 bits
}

TEST_CASE("/proc/self/cgroup gives the v2 path and the v1 memory path", "[memory_limit]") {
  // A hybrid host: v1 controllers, one of them listed with another, and the v2 line.
  const auto hybrid = cgroup_paths(
      "12:pids:/job\n4:memory,hugetlb:/slurm/uid_1000/job_42\n1:name=systemd:/x\n0::/job.scope\n");
  CHECK(hybrid.unified == std::optional<std::string>("/job.scope"));
  CHECK(hybrid.memory == std::optional<std::string>("/slurm/uid_1000/job_42"));
  // cgroup v2 alone: one line.
  const auto v2 = cgroup_paths("0::/user.slice/run.scope\n");
  CHECK(v2.unified == std::optional<std::string>("/user.slice/run.scope"));
  CHECK_FALSE(v2.memory);
  CHECK_FALSE(cgroup_paths("garbage\n").unified);
}

TEST_CASE("the default ceiling is the smallest of MemAvailable and the cgroup limits",
          "[memory_limit]") {
  unfurl::test::TempFolder dir;
  SystemFiles files{.meminfo = dir.path() / "meminfo",
                    .self_cgroup = dir.path() / "cgroup",
                    .cgroup_root = dir.path() / "sys"};
  write(files.meminfo, kMeminfo);
  const std::uint64_t available = std::uint64_t{11385212} * 1024;

  SECTION("no group file: MemAvailable") {
    write(files.self_cgroup, "0::/job.scope\n");
    const auto c = system_memory_ceiling(files);
    CHECK(c.bytes == available);
    CHECK(c.source.find("MemAvailable") != std::string::npos);
  }
  SECTION("v2 'max' on the group, a limit on its parent: the parent's") {
    write(files.self_cgroup, "0::/batch/job.scope\n");
    write(files.cgroup_root / "batch/job.scope/memory.max", "max\n");
    write(files.cgroup_root / "batch/memory.max", "4294967296\n");
    const auto c = system_memory_ceiling(files);
    CHECK(c.bytes == std::uint64_t{4294967296});
    CHECK(c.source.find("batch/memory.max") != std::string::npos);
  }
  SECTION("v1 memory limit and a hybrid v2 limit: the smaller") {
    write(files.self_cgroup, "4:memory:/slurm/job_42\n0::/job_42\n");
    write(files.cgroup_root / "memory/slurm/job_42/memory.limit_in_bytes", "2147483648\n");
    write(files.cgroup_root / "unified/job_42/memory.max", "3221225472\n");
    const auto c = system_memory_ceiling(files);
    CHECK(c.bytes == std::uint64_t{2147483648});
    CHECK(c.source.find("memory.limit_in_bytes") != std::string::npos);
  }
  SECTION("a cgroup limit above MemAvailable: MemAvailable") {
    write(files.self_cgroup, "4:memory:/\n");
    write(files.cgroup_root / "memory/memory.limit_in_bytes", "9223372036854771712\n");
    CHECK(system_memory_ceiling(files).bytes == available);
  }
  SECTION("nothing readable: a share of the physical memory, never zero") {
    files.meminfo = dir.path() / "missing";
    files.self_cgroup = dir.path() / "missing";
    const auto c = system_memory_ceiling(files);
    CHECK(c.bytes > 0);
    CHECK_FALSE(c.source.empty());
  }
}
