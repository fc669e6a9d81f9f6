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

// The identity of the point file a run read, for the map's "input" attribute: the file's
// path, dataset, bytes and modification time (io::input_identity), the modification time in
// nanoseconds ("modified_unix_ns") and its shape, rows in the file and columns ("file_rows",
// "columns"), which `score` compares with the points it gets.
nlohmann::json point_input_identity(const std::filesystem::path& file,
                                    const io::PointReadResult& read);

// What differs between the point file a map records as its input and the one given now
// ("rows 200 (the map records 300), ..."); empty when nothing both record differs. The path
// is not compared: the same file may be reached by another name or copied with its time.
std::string input_differences(const nlohmann::json& recorded, const nlohmann::json& now);

}  // namespace unfurl::app
