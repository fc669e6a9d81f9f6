// Map coordinates as CSV: a header row, then one row per point with its input row index and
// its coordinates. Values are printed with std::to_chars in the shortest form that reads
// back to the same float32 bit for bit, so the CSV loses nothing against the map file.
//
//   row,x1,x2
//   0,-1.25,3.0000002
//   2,0.5,1e-07
#pragma once

#include <cstdint>
#include <filesystem>
#include <span>
#include <string>
#include <vector>

#include "engine/points.hpp"
#include "io/atomic_output.hpp"

namespace unfurl::io {

// Writes atomically (io/atomic_output.hpp): the file appears whole or not at all. `rows`
// holds one input row index per point. `names` are the coordinate column headers; empty
// means x1..xm. Throws OutputError when the file cannot be created, IoError when writing
// fails, InternalError when the sizes disagree.
void write_coordinates_csv(const std::filesystem::path& path, const PointSet& coords,
                           std::span<const std::int64_t> rows,
                           const std::vector<std::string>& names = {});
// The same into output `output` of `outputs`, committed with the rest of the set.
void write_coordinates_csv(OutputSet& outputs, std::size_t output, const PointSet& coords,
                           std::span<const std::int64_t> rows,
                           const std::vector<std::string>& names = {});

}  // namespace unfurl::io
