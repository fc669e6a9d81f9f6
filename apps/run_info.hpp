// Facts about this run that the map file and the summary record.
#pragma once

#include <cstdint>
#include <filesystem>
#include <string>

namespace unfurl::app {

std::uint64_t peak_memory_bytes();  // resident set high-water mark of this process
std::string host_name();
std::string utc_now_iso8601();
std::string human_bytes(std::uint64_t bytes);

// Size and modification time of an input file, to identify it in the map's attributes.
struct FileIdentity {
  std::string path;
  std::uint64_t bytes = 0;
  std::string modified;  // UTC ISO 8601
};
FileIdentity identify_file(const std::filesystem::path& path);

}  // namespace unfurl::app
