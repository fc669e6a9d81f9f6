// Internal: what the map and graph files share: the storage layout chosen by size, and
// extra float64 datasets (MapArray) written and read with their attributes.
#pragma once

#include <cstddef>
#include <string>

#include "io/hdf5_file.hpp"
#include "io/map_array.hpp"

namespace unfurl::io::detail {

// The caller's layout for datasets above 4 MiB; smaller ones stay contiguous (chunking a
// small dataset only adds index overhead).
H5WriteOptions layout_for_bytes(std::size_t bytes, H5WriteOptions large);

void write_map_array(H5Writer& out, const MapArray& array, H5WriteOptions large);
MapArray read_map_array(const H5Reader& in, const std::string& dataset);

}  // namespace unfurl::io::detail
