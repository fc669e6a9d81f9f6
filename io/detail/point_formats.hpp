// Internal: the per-format point readers behind io::read_points, and the helpers they share.
// Each reader fills points, source_type, dataset, column_names and file_rows of the result
// for the rows of options.rows; read_points then handles non-finite rows and row indices.
#pragma once

#include <cstddef>
#include <filesystem>
#include <optional>
#include <string>

#include "io/points_reader.hpp"

namespace unfurl::io::detail {

// A row range checked against the rows a file holds: [begin, end), begin < end.
struct RowWindow {
  std::size_t begin = 0;
  std::size_t end = 0;
  std::size_t size() const { return end - begin; }
};

// Throws OptionError("--rows: ...") naming `where` when the range lies outside file_rows.
RowWindow resolve_rows(const std::optional<RowRange>& range, std::size_t file_rows,
                       const std::string& where);

// rows x cols zeros; throws DataError when the count overflows and ResourceError when the
// allocation fails (a crafted header can claim any shape).
PointSet allocate_points(std::size_t rows, std::size_t cols, const std::string& where);

// Float32 from a stored double; throws DataError naming `where` when a finite value lies
// outside the float32 range (NaN and inf pass through for the non-finite check).
float narrow_to_float(double value, const std::string& where);

void read_hdf5_points(const std::filesystem::path& file, const PointReadOptions& options,
                      PointReadResult& result);
void read_npy_points(const std::filesystem::path& file, const PointReadOptions& options,
                     PointReadResult& result);
// format: "csv" (delimiter sniffed) or "tsv" (tab).
void read_text_points(const std::filesystem::path& file, const PointReadOptions& options,
                      const std::string& format, PointReadResult& result);

}  // namespace unfurl::io::detail
