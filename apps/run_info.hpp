// Facts about this run that the map file and the summary record.
#pragma once

#include <cstdint>
#include <string>

namespace unfurl::app {

std::uint64_t peak_memory_bytes();  // resident set high-water mark of this process
std::string human_bytes(std::uint64_t bytes);

// 80% of the physical memory: the default --max-memory.
std::uint64_t default_memory_limit();
}  // namespace unfurl::app
