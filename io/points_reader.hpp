// Reading point sets (N rows = points, d columns = coordinates) from HDF5, CSV/TSV and NPY
// files into one contiguous row-major float32 PointSet (engine/points.hpp).
//
// Conventions shared by every format:
// - Row indices are 0-based and count data rows only (a CSV header, comment and blank lines
//   are not rows); --rows A:B is half-open, like the row indices in PointReadResult::rows.
// - CSV line and column numbers in messages are 1-based, as text editors and spreadsheets
//   show them.
// - Every value is read in double, its column's centre is subtracted, and only then is it
//   narrowed to float32 (io/detail/point_formats.hpp, PointNarrowing): offsets such as 1e6 m
//   or 1.7e9 s keep their digits. The centres are part of the result (a map records them as
//   /input/centres). A centred value outside the float32 range is an error, never clipped.
// - Every kept row carries a 64-bit key of its values as read (PointSet::row_keys), so that
//   rows equal only after narrowing are never merged as duplicates.
// - A 1-D NPY array is read as N rows of one column; HDF5 datasets must be 2-D (their 1-D
//   datasets are usually labels, and the default dataset is the only 2-D numeric one).
// - Files are untrusted: shapes and types are checked before any data is read, and damaged
//   input throws (engine/error.hpp), never crashes.
#pragma once

#include <cstddef>
#include <cstdint>
#include <filesystem>
#include <optional>
#include <string>
#include <vector>

#include "engine/points.hpp"
#include "engine/stop.hpp"

namespace unfurl::io {

// A half-open range of rows [begin, end); no end means "to the last row".
struct RowRange {
  std::size_t begin = 0;
  std::optional<std::size_t> end;
};

// Parses "A:B", "A:" or ":B" (non-negative integers, A < B when both are given).
// Throws OptionError("PointReadOptions.rows", ...) on anything else.
RowRange parse_row_range(const std::string& text);

// Renders a range back as the user wrote it ("A:B", "A:").
std::string to_string(const RowRange& range);

struct PointReadOptions {
  std::string dataset;           // HDF5 path; empty: the file's only 2-D numeric dataset
  std::optional<RowRange> rows;  // part of the file (default: every row)
  bool drop_nonfinite = false;   // drop rows holding NaN/inf instead of failing
  std::string format;            // "", "hdf5", "csv", "tsv", "npy"; empty: magic bytes/extension
  StopToken stop;                // polled between blocks of rows (InterruptedError)
  // Subtract these column centres (a map's /input/centres) instead of the rows' own mean.
  std::optional<std::vector<double>> centres;

  // Throws OptionError naming the field ("PointReadOptions.format", "PointReadOptions.rows").
  void validate() const;
};

struct PointReadResult {
  PointSet points;                         // kept rows, row-major float32, one buffer
  std::vector<std::int64_t> rows;          // input row index of every kept row
  std::vector<std::int64_t> dropped_rows;  // rows dropped as non-finite (drop_nonfinite)
  std::size_t nonfinite_values = 0;        // NaN/inf values found (all in dropped rows)
  std::string format;                      // "hdf5", "csv", "tsv", "npy"
  std::string dataset;                     // HDF5 dataset path read ("" for other formats)
  std::string source_type;                 // stored type: "float64", "int16", "text", ...
  std::vector<std::string> column_names;   // CSV header if any
  std::size_t file_rows = 0;               // rows the file holds (before --rows and drops)
  std::vector<double> centres;             // per column, subtracted in double before narrowing
  std::vector<std::string> warnings;       // e.g. columns that lose their spread in float32
  double read_seconds = 0;                 // wall time of the read
};

// Reads the point set of `file`. Throws MissingInputError (no file, no dataset), DataError
// (wrong shape or type, NaN/inf, ragged or non-numeric text), IoError (truncated or corrupt
// file), OptionError (bad options, --rows outside the file).
PointReadResult read_points(const std::filesystem::path& file,
                            const PointReadOptions& options = {});

// The format read_points would use for `file` with `requested` ("" = detect): "hdf5", "csv",
// "tsv" or "npy". Throws MissingInputError when the file does not exist.
std::string detect_point_format(const std::filesystem::path& file,
                                const std::string& requested = "");

}  // namespace unfurl::io
