// What a point file holds, for `unfurl inspect`: the datasets of an HDF5 file (shape, type,
// storage, filters, attributes) or the shape and type of a CSV/TSV/NPY file, and per-column
// statistics of a point set read from it. Printing is left to apps/.
#pragma once

#include <cstdint>
#include <filesystem>
#include <string>
#include <vector>

#include "engine/points.hpp"
#include "engine/stop.hpp"

namespace unfurl::io {

// An attribute rendered as text: numbers and strings in full up to a few values, else a
// note of the type and count.
struct AttributeText {
  std::string name;
  std::string value;
};

struct ArrayDescription {
  std::string path;                  // HDF5 dataset path; "" for CSV/TSV/NPY
  std::vector<std::uint64_t> shape;  // rows first; empty for a scalar
  std::string type;                  // "float32", "int64", "string", "text", ...
  std::string storage;               // "contiguous", "chunked", "compact", "C order", ...
  std::vector<std::uint64_t> chunk;  // chunk shape when chunked
  std::vector<std::string> filters;  // "deflate", "shuffle", ... ("x (not available)")
  std::vector<AttributeText> attributes;
  bool points_candidate = false;  // 2-D numeric with rows and columns: readable as points
};

struct FileDescription {
  std::filesystem::path file;
  std::string format;                          // "hdf5", "csv", "tsv", "npy"
  std::uintmax_t bytes = 0;                    // file size
  std::string detail;                          // "NPY format 1.0", "delimiter ',' with header", ...
  std::vector<AttributeText> root_attributes;  // HDF5 attributes on "/"
  std::vector<ArrayDescription> arrays;        // every HDF5 dataset; one entry otherwise
  std::vector<std::string> column_names;       // CSV header if any
};

// Throws like read_points: MissingInputError, IoError, DataError; HDF5 files are opened by
// io::H5Reader (isolated metadata walk with a time limit; `stop` ends the wait).
FileDescription describe_file(const std::filesystem::path& file, const std::string& format = "",
                              const StopToken& stop = {});

struct ColumnStats {
  double min = 0;
  double max = 0;
  double mean = 0;  // accumulated in double
};

// One entry per column of `points` (which read_points left free of NaN/inf).
// `centres`: the column centres read_points subtracted (PointReadResult::centres), added back
// so that the figures are those of the values as read; empty: none.
std::vector<ColumnStats> column_stats(const PointSet& points,
                                      const std::vector<double>& centres = {});

}  // namespace unfurl::io
