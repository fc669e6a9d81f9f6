// Values to colour a map by, read from a file of the input rows (a label dataset of an HDF5
// file, or a column of a point file).
#pragma once

#include <cstdint>
#include <filesystem>
#include <string>
#include <vector>

#include "io/plot/figures.hpp"

namespace unfurl::io::plot {

struct ColourSource {
  std::filesystem::path file;
  std::string dataset;     // HDF5: a 1-D dataset (labels) or a 2-D one; empty: the default
  std::size_t column = 0;  // column of a 2-D dataset, CSV or NPY file (0-based)
};

// One value per map row: the file's value at the map row's input row (`rows`). Throws
// DataError naming the file when a row lies beyond the file's rows or the column beyond its
// columns, and what io::read_points throws for an unreadable file.
PointColours read_colour_values(const ColourSource& source, const std::vector<std::int64_t>& rows);

}  // namespace unfurl::io::plot
