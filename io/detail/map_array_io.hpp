// Internal: what the map and graph files share: the storage layout chosen by size, and
// extra float64 datasets (MapArray) written and read with their attributes.
#pragma once

#include <cstddef>
#include <string>

#include "io/hdf5_file.hpp"
#include "io/map_array.hpp"

namespace unfurl::io::detail {

// Datasets above 4 MiB are chunked and deflated at the fastest level (bench/RESULTS.md,
// "io-maps", has the cost); smaller ones stay contiguous.
H5WriteOptions layout_for_bytes(std::size_t bytes);

void write_map_array(H5Writer& out, const MapArray& array);
MapArray read_map_array(const H5Reader& in, const std::string& dataset);

}  // namespace unfurl::io::detail
