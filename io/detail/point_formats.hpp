// Internal: the per-format point readers behind io::read_points, and the helpers they share.
// Each reader fills points, source_type, dataset, column_names and file_rows of the result
// for the rows of options.rows; read_points then handles non-finite rows and row indices.
#pragma once

#include <cstddef>
#include <cstdint>
#include <filesystem>
#include <istream>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

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

// The header of an NPY file (numpy.lib.format, NEP 1), checked to describe plain numbers.
struct NpyHeader {
  unsigned major = 0, minor = 0;  // format version
  char kind = 0;                  // 'f', 'i', 'u'
  std::size_t item = 0;           // bytes per value
  bool swap = false;              // file byte order differs from this machine's
  bool fortran = false;           // column-major data
  std::vector<std::size_t> shape;
  std::uint64_t data_offset = 0;  // first data byte
  std::string descr;              // as written, e.g. "<f8"
  std::string type_name() const;  // "float64", "uint8", ...
};
// Throws IoError (truncated, no signature) or DataError (unsupported dtype or version).
NpyHeader read_npy_header(std::istream& in, std::uint64_t file_size, const std::string& where);

// What the first lines of a text point file say, and how many data lines follow.
struct TextLayout {
  char delimiter = ',';                   // ' ' means runs of spaces or tabs
  std::vector<std::string> column_names;  // the header, if any
  std::size_t columns = 0;                // fields of the first content line
  std::size_t data_rows = 0;              // content lines after the header
};
TextLayout scan_text_layout(const std::filesystem::path& file, const std::string& format);

// File text quoted in a message: at most `limit` bytes, anything but printable ASCII as '?',
// so that a damaged file cannot break the one-line message.
std::string printable(std::string_view text, std::size_t limit = 40);

void read_hdf5_points(const std::filesystem::path& file, const PointReadOptions& options,
                      PointReadResult& result);
void read_npy_points(const std::filesystem::path& file, const PointReadOptions& options,
                     PointReadResult& result);
// format: "csv" (delimiter sniffed) or "tsv" (tab).
void read_text_points(const std::filesystem::path& file, const PointReadOptions& options,
                      const std::string& format, PointReadResult& result);

}  // namespace unfurl::io::detail
