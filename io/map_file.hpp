// The map file: one HDF5 file holding an unfolded map and everything needed to judge and
// reuse it. Its layout and record are described once, in io/map_record.hpp.
//
// Datasets are contiguous and uncompressed unless the writer is asked to deflate the large
// ones (above 4 MiB): in one measured run deflate level 1 took 20 times the wall time of a
// contiguous map write for a file 15% smaller (bench/RESULTS.md, io-maps). Readers need
// nothing special either way.
#pragma once

#include <cstdint>
#include <filesystem>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <vector>

#include "io/atomic_output.hpp"
#include "io/hdf5_file.hpp"
#include "io/map_record.hpp"

namespace unfurl::io {

// The newest map layout this build writes and the newest it reads. Version 1 maps are still read
// (io/map_record.hpp lists the differences).
inline constexpr std::int64_t map_format_version = 2;

// Writes every field of `contents` (format version 2), atomically: the file appears whole at `path`
// or not at all, and an existing file there is untouched on failure. Adds format_version,
// program_version and, unless given, creation_time, host and peak_memory_bytes to the attributes.
// Throws OutputError when the output cannot be created, IoError when writing fails, InternalError
// when the contents disagree in size (a caller's bug). `large` is the layout of datasets above 4
// MiB (default contiguous).
void write_map(const std::filesystem::path& path, const MapContents& contents,
               H5WriteOptions large = {});
// The same into output `output` of `outputs`, committed with the rest of the set.
void write_map(OutputSet& outputs, std::size_t output, const MapContents& contents,
               H5WriteOptions large = {});

// Reads a map file (version 1 or 2) in full; the geodesic rows (often the largest part) only
// when asked. Rejects a newer format version and a file without /coords or /rows; checks
// every size against N, m and L and every row id (a whole number >= 0). Errors as described
// in io/hdf5_file.hpp. The attributes keep the file's format_version.
MapContents read_map(const std::filesystem::path& path, bool with_geodesic = false);

// Whether `file` is an unfurl map (an HDF5 file with /coords, /rows and a format_version on
// /), for commands that take either a map or a plain array. False for other formats; errors
// of an HDF5 file that cannot be opened as in io/hdf5_file.hpp.
bool is_map_file(const std::filesystem::path& file);

// The identity of an input file for the map's attributes: {"path", "dataset", "bytes",
// "modified" (UTC ISO 8601)}. Throws MissingInputError when the file does not exist.
nlohmann::json input_identity(const std::filesystem::path& file, const std::string& dataset);

// Now in UTC, ISO 8601 to the second ("2026-12-01T17:39:56Z").
std::string utc_now_iso8601();

}  // namespace unfurl::io
