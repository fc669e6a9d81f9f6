// Facts about this run that the map file and the summary record.
#pragma once

#include <cstdint>
#include <filesystem>
#include <string>

#include <nlohmann/json.hpp>

#include "io/points_reader.hpp"

namespace unfurl::app {

std::uint64_t peak_memory_bytes();  // resident set high-water mark of this process
std::string human_bytes(std::uint64_t bytes);

// 80% of the physical memory: the default --max-memory.
std::uint64_t default_memory_limit();

// The identity of the point file a run read, for the map's "input" attribute: the file's
// path, dataset, bytes and modification time (io::input_identity), the modification time in
// nanoseconds ("modified_unix_ns") and its shape, rows in the file and columns ("file_rows",
// "columns"), which `score` compares with the points it gets.
nlohmann::json point_input_identity(const std::filesystem::path& file,
                                    const io::PointReadResult& read);

// Whether `file` is a map written by unfurl: HDF5 with /coords, /rows and a format_version.
bool is_unfurl_map(const std::filesystem::path& file);

}  // namespace unfurl::app
