// Internal: the per-format point readers behind io::read_points, and the helpers they share.
// Each reader fills points, source_type, dataset, column_names and file_rows of the result
// for the rows of options.rows; read_points then handles non-finite rows and row indices.
#pragma once

#include <algorithm>
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <cstring>
#include <filesystem>
#include <istream>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "io/detail/npy_array.hpp"
#include "io/detail/text_lines.hpp"
#include "io/points_reader.hpp"

namespace unfurl::io::detail {

// "hdf5" or "npy" when the file starts with that format's signature, else "" (also when
// the file cannot be read: its reader then says why).
std::string format_by_signature(const std::filesystem::path& file);

// A row range checked against the rows a file holds: [begin, end), begin < end.
struct RowWindow {
  std::size_t begin = 0;
  std::size_t end = 0;
  std::size_t size() const { return end - begin; }
};

// Throws OptionError("PointReadOptions.rows", ...) naming `where` when the range lies outside
// file_rows.
RowWindow resolve_rows(const std::optional<RowRange>& range, std::size_t file_rows,
                       const std::string& where);

// rows x cols zeros; throws DataError when the count overflows and ResourceError when the
// allocation fails (a crafted header can claim any shape).
PointSet allocate_points(std::size_t rows, std::size_t cols, const std::string& where);

// The one conversion step of every point reader: values as read (in double) become
// float32 points minus per-column centres, so that an offset (1e6 m, 1.7e9 s) does not eat
// the float32 mantissa. One pass: each column's provisional centre is its first finite
// value; the exact mean of the differences is accumulated in double and shifted out at the
// end, so the recorded centre is provisional + mean. With fixed centres (a map's record),
// those are subtracted instead. Every row also gets a 64-bit key of its values as read, so
// that rows equal only after narrowing are not taken for duplicates.
// Values of a row must arrive in increasing column order (any row order).
class PointNarrowing {
 public:
  PointNarrowing(PointSet& points, const std::optional<std::vector<double>>& fixed_centres,
                 std::string where);
  // Stores `value` (row and column of points, 0-based) minus its column's centre.
  // `file_row` names the value in the out-of-range message.
  void put(std::size_t row, std::size_t col, double value, std::size_t file_row) {
    const double centred = value - provisional(col, value);
    points_.values[row * cols_ + col] = narrow(centred, file_row, col);
    if (std::isfinite(value)) {
      Column& c = columns_[col];
      c.sum += centred;
      ++c.count;
      c.min = std::min(c.min, value);
      c.max = std::max(c.max, value);
    }
    const double key_value = value + 0.0;  // -0 and +0 key alike
    std::uint64_t bits = 0;
    std::memcpy(&bits, &key_value, sizeof bits);
    keys_[row] = (keys_[row] ^ bits) * 0x100000001b3ull;  // FNV-1a step (FNV spec)
  }
  // Makes room for `rows` rows in all (for readers that do not know the count up front).
  void grow(std::size_t rows);
  // Shifts by the mean difference; fills result.centres, result.warnings and
  // result.points.row_keys (the points must be the ones given to the constructor).
  void finish(PointReadResult& result);

 private:
  struct Column {
    bool has_centre = false;
    double centre = 0, sum = 0, min = 0, max = 0;
    std::size_t count = 0;
  };
  double provisional(std::size_t col, double value) {
    Column& c = columns_[col];
    if (!c.has_centre && std::isfinite(value)) {
      c.has_centre = true;
      c.centre = value;
      c.min = c.max = value;
    }
    return c.centre;
  }
  float narrow(double centred, std::size_t file_row, std::size_t col) const;

  PointSet& points_;
  std::size_t cols_;
  bool fixed_;
  std::vector<Column> columns_;
  std::vector<std::uint64_t> keys_;
  std::string where_;
};

// What the first lines of a text point file say, and how many data lines follow.
struct TextLayout {
  char delimiter = ',';                   // ' ' means runs of spaces or tabs
  std::vector<std::string> column_names;  // the header, if any
  std::size_t columns = 0;                // fields of the first content line
  std::size_t data_rows = 0;              // content lines after the header
};
TextLayout scan_text_layout(const std::filesystem::path& file, const std::string& format);

void read_hdf5_points(const std::filesystem::path& file, const PointReadOptions& options,
                      PointReadResult& result);
void read_npy_points(const std::filesystem::path& file, const PointReadOptions& options,
                     PointReadResult& result);
// format: "csv" (delimiter sniffed) or "tsv" (tab).
void read_text_points(const std::filesystem::path& file, const PointReadOptions& options,
                      const std::string& format, PointReadResult& result);

}  // namespace unfurl::io::detail
