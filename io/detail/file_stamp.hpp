// Internal: the attributes every unfurl HDF5 output carries on "/" (format version, program
// version, creation time, host, peak memory), and the reader's check of the format version.
#pragma once

#include <cstdint>
#include <ctime>
#include <nlohmann/json.hpp>
#include <string>

#include "io/hdf5_file.hpp"

namespace unfurl::io::detail {

// Returns attrs with format_version and program_version set, and creation_time, host and
// peak_memory_bytes added unless the caller gave them.
nlohmann::json stamp_attributes(nlohmann::json attrs, std::int64_t format_version);

// The file's format version; DataError when "/" has no integer format_version, or a newer
// one than `newest`.
std::int64_t check_format_version(const H5Reader& in, std::int64_t newest, const char* what);

std::string iso8601_utc(std::time_t t);

}  // namespace unfurl::io::detail
