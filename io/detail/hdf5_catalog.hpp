// Internal: opening untrusted HDF5 files and finding what they hold, shared by the point
// reader (io/detail/hdf5_points.cpp) and the file description (io/file_description.cpp).
#pragma once

#include <filesystem>
#include <string>
#include <vector>

#include "io/detail/hdf5.hpp"

namespace unfurl::io::detail {

// Read-only open; MissingInputError when absent, IoError when not HDF5 or damaged.
Hid open_hdf5_read(const std::filesystem::path& file);

// Absolute paths of every dataset reachable from "/" (each object once, by H5Ovisit).
std::vector<std::string> dataset_paths(hid_t file, const std::string& where);

// "float32", "int16", "uint8", "string", "compound", ...
std::string hdf5_type_name(hid_t type);
bool is_numeric_type(hid_t type);
// A numeric type HDF5 converts safely: integers of 1, 2, 4 or 8 whole bytes, or the IEEE 754
// half, single or double layout, either byte order. Damaged files can declare other layouts
// (a float of 24,328 bytes), on which HDF5 1.10's conversion writes out of bounds.
bool is_plain_numeric_type(hid_t type);

// Dimensions of a simple dataspace (empty for scalar or null); IoError when unreadable.
std::vector<hsize_t> dataspace_dims(hid_t space, const std::string& where);

// Datasets that can be points: 2-D, numeric, at least one row and column. With
// include_empty, also 2-D numeric datasets with no rows or no columns (so that a file whose
// only points are empty is reported as empty data, not as a file without points).
std::vector<std::string> point_dataset_paths(hid_t file, const std::string& where,
                                             bool include_empty = false);

// "/a, /b" or "none" for messages.
std::string join_paths(const std::vector<std::string>& paths);

// Filters of a dataset creation property list, by name ("deflate", "shuffle", ...).
struct FilterInfo {
  int id = 0;
  std::string name;
  bool available = false;  // this HDF5 library can decode it
};
std::vector<FilterInfo> dataset_filters(hid_t dcpl);

}  // namespace unfurl::io::detail
