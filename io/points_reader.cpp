#include "io/points_reader.hpp"

#include <algorithm>
#include <array>
#include <charconv>
#include <chrono>
#include <cmath>
#include <fstream>
#include <limits>
#include <new>

#include <unistd.h>

#include "engine/error.hpp"
#include "io/detail/point_formats.hpp"

namespace unfurl::io {

namespace {

std::optional<std::size_t> parse_index(const std::string& text, const std::string& whole) {
  if (text.empty()) return std::nullopt;
  std::size_t value = 0;
  const auto [end, ec] = std::from_chars(text.data(), text.data() + text.size(), value);
  if (ec != std::errc() || end != text.data() + text.size())
    throw OptionError("PointReadOptions.rows",
                      "'" + whole + "' is not A:B with non-negative integers A < B");
  return value;
}

std::string lower_extension(const std::filesystem::path& file) {
  std::string ext = file.extension().string();
  std::transform(ext.begin(), ext.end(), ext.begin(),
                 [](unsigned char c) { return static_cast<char>(std::tolower(c)); });
  return ext;
}

// Keeps the rows without NaN/inf (compacting in place, no second buffer) or throws.
void handle_nonfinite(PointReadResult& result, std::size_t first_row, bool drop,
                      const std::string& where) {
  PointSet& p = result.points;
  std::size_t bad_values = 0, bad_rows = 0, kept = 0;
  std::optional<std::pair<std::size_t, std::size_t>> first_bad;
  result.rows.clear();
  result.rows.reserve(p.rows);
  for (std::size_t i = 0; i < p.rows; ++i) {
    const float* row = p.row(i);
    std::size_t bad_here = 0;
    for (std::size_t j = 0; j < p.cols; ++j) {
      if (!std::isfinite(row[j])) {
        if (!first_bad) first_bad = {first_row + i, j};
        ++bad_here;
      }
    }
    bad_values += bad_here;
    if (bad_here > 0) {
      ++bad_rows;
      result.dropped_rows.push_back(static_cast<std::int64_t>(first_row + i));
      continue;
    }
    if (kept != i) {
      std::copy(row, row + p.cols, p.row(kept));
      if (!p.row_keys.empty()) p.row_keys[kept] = p.row_keys[i];
    }
    result.rows.push_back(static_cast<std::int64_t>(first_row + i));
    ++kept;
  }
  if (bad_values > 0 && !drop) {
    throw DataError(where + ": " + std::to_string(bad_values) +
                    " non-finite value(s) (NaN or inf) in " + std::to_string(bad_rows) +
                    " row(s), first at row " + std::to_string(first_bad->first) + " column " +
                    std::to_string(first_bad->second) +
                    " (0-based); --drop-nonfinite drops such rows");
  }
  if (kept == 0)
    throw DataError(where + ": every one of the " + std::to_string(p.rows) +
                    " rows read holds NaN or inf; no points left");
  result.nonfinite_values = bad_values;
  p.rows = kept;
  p.values.resize(kept * p.cols);
  if (!p.row_keys.empty()) p.row_keys.resize(kept);
}

}  // namespace

RowRange parse_row_range(const std::string& text) {
  const auto colon = text.find(':');
  if (colon == std::string::npos || text.find(':', colon + 1) != std::string::npos)
    throw OptionError("PointReadOptions.rows", "'" + text + "' is not A:B, A: or :B");
  RowRange range;
  range.begin = parse_index(text.substr(0, colon), text).value_or(0);
  range.end = parse_index(text.substr(colon + 1), text);
  if (range.end && *range.end <= range.begin)
    throw OptionError("PointReadOptions.rows", "'" + text + "' is empty (A must be less than B)");
  return range;
}

std::string to_string(const RowRange& range) {
  return std::to_string(range.begin) + ":" + (range.end ? std::to_string(*range.end) : "");
}

void PointReadOptions::validate() const {
  static const std::array<const char*, 5> formats{"", "hdf5", "csv", "tsv", "npy"};
  if (std::find(formats.begin(), formats.end(), format) == formats.end())
    throw OptionError("PointReadOptions.format",
                      "'" + format + "' is not one of hdf5, csv, tsv, npy");
  if (rows && rows->end && *rows->end <= rows->begin)
    throw OptionError("PointReadOptions.rows",
                      "'" + to_string(*rows) + "' is empty (A must be less than B)");
  if (!dataset.empty() && !format.empty() && format != "hdf5")
    throw OptionError("PointReadOptions.dataset",
                      "only HDF5 files hold datasets, not " + format + " files");
  if (centres &&
      std::any_of(centres->begin(), centres->end(), [](double c) { return !std::isfinite(c); }))
    throw DataError("/input/centres: holds a value that is not finite");
}

std::string detect_point_format(const std::filesystem::path& file, const std::string& requested) {
  std::error_code ec;
  if (!std::filesystem::exists(file, ec)) throw MissingInputError(file.string() + ": no such file");
  if (std::filesystem::is_directory(file, ec))
    throw MissingInputError(file.string() + ": is a folder, not a point file");
  if (!requested.empty()) return requested;
  if (std::ifstream probe(file, std::ios::binary); !probe)
    throw MissingInputError(file.string() + ": cannot be opened for reading");
  if (std::string by_content = detail::format_by_signature(file); !by_content.empty())
    return by_content;
  const std::string ext = lower_extension(file);
  if (ext == ".h5" || ext == ".hdf5" || ext == ".hdf" || ext == ".he5") return "hdf5";
  if (ext == ".npy") return "npy";
  if (ext == ".tsv" || ext == ".tab") return "tsv";
  return "csv";  // text with a sniffed delimiter; the parser says what is wrong if it is not
}

PointReadResult read_points(const std::filesystem::path& file, const PointReadOptions& options) {
  options.validate();
  const auto start = std::chrono::steady_clock::now();
  PointReadResult result;
  result.format = detect_point_format(file, options.format);
  if (!options.dataset.empty() && result.format != "hdf5")
    throw OptionError("PointReadOptions.dataset",
                      file.string() + " is a " + result.format + " file, which holds no datasets");
  if (result.format == "hdf5")
    detail::read_hdf5_points(file, options, result);
  else if (result.format == "npy")
    detail::read_npy_points(file, options, result);
  else
    detail::read_text_points(file, options, result.format, result);

  const std::string where = file.string() + (result.dataset.empty() ? "" : ":" + result.dataset);
  const std::size_t first_row = options.rows ? options.rows->begin : 0;
  handle_nonfinite(result, first_row, options.drop_nonfinite, where);
  result.read_seconds =
      std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  return result;
}

namespace detail {

std::string format_by_signature(const std::filesystem::path& file) {
  std::array<char, 8> magic{};
  std::ifstream in(file, std::ios::binary);
  in.read(magic.data(), magic.size());
  const auto got = static_cast<std::size_t>(in.gcount());
  // Signatures: HDF5 file format specification, "Format Signature"; NPY format
  // (numpy.lib.format, NEP 1): "\x93NUMPY".
  static constexpr char hdf5_magic[] = "\x89HDF\r\n\x1a\n";
  static constexpr char npy_magic[] = "\x93NUMPY";
  if (got >= 8 && std::equal(magic.begin(), magic.end(), hdf5_magic)) return "hdf5";
  if (got >= 6 && std::equal(magic.begin(), magic.begin() + 6, npy_magic)) return "npy";
  return "";
}

RowWindow resolve_rows(const std::optional<RowRange>& range, std::size_t file_rows,
                       const std::string& where) {
  RowWindow w{0, file_rows};
  if (!range) return w;
  w.begin = range->begin;
  w.end = range->end.value_or(file_rows);
  if (w.begin >= file_rows || w.end > file_rows)
    throw OptionError("PointReadOptions.rows", to_string(*range) + " lies outside " + where +
                                                   ", which has " + std::to_string(file_rows) +
                                                   " rows (0:" + std::to_string(file_rows) + ")");
  return w;
}

PointSet allocate_points(std::size_t rows, std::size_t cols, const std::string& where) {
  if (rows == 0 || cols == 0)
    throw DataError(where + ": has " + std::to_string(rows) + " rows and " + std::to_string(cols) +
                    " columns; points need at least one of each");
  if (rows > std::numeric_limits<std::size_t>::max() / sizeof(float) / cols)
    throw DataError(where + ": shape " + std::to_string(rows) + " x " + std::to_string(cols) +
                    " is too large to address");
  // Refuse before trying what cannot fit: a damaged header can claim petabytes.
  const double bytes = static_cast<double>(rows) * static_cast<double>(cols) * sizeof(float);
  const long pages = sysconf(_SC_PHYS_PAGES), page_size = sysconf(_SC_PAGE_SIZE);
  if (pages > 0 && page_size > 0 && bytes > static_cast<double>(pages) * page_size)
    throw ResourceError(where + ": " + std::to_string(rows) + " x " + std::to_string(cols) +
                        " float32 values need more memory than this machine has (try --rows)");
  try {
    return PointSet(rows, cols);
  } catch (const std::bad_alloc&) {
    throw ResourceError(where + ": " + std::to_string(rows) + " x " + std::to_string(cols) +
                        " float32 values do not fit in memory (try --rows)");
  } catch (const std::length_error&) {
    throw ResourceError(where + ": " + std::to_string(rows) + " x " + std::to_string(cols) +
                        " float32 values do not fit in memory (try --rows)");
  }
}

PointNarrowing::PointNarrowing(PointSet& points,
                               const std::optional<std::vector<double>>& fixed_centres,
                               std::string where)
    : points_(points),
      cols_(points.cols),
      fixed_(fixed_centres.has_value()),
      columns_(points.cols),
      keys_(points.rows, 0xcbf29ce484222325ull),  // FNV-1a offset basis (FNV spec)
      where_(std::move(where)) {
  if (!fixed_) return;
  if (fixed_centres->size() != cols_)
    throw DataError(where_ + ": has " + std::to_string(cols_) + " columns, the map's " +
                    "/input/centres records " + std::to_string(fixed_centres->size()));
  for (std::size_t j = 0; j < cols_; ++j) {
    columns_[j].has_centre = true;
    columns_[j].centre = (*fixed_centres)[j];
    columns_[j].min = std::numeric_limits<double>::infinity();
    columns_[j].max = -std::numeric_limits<double>::infinity();
  }
}

void PointNarrowing::grow(std::size_t rows) {
  points_.rows = rows;
  points_.values.resize(rows * cols_);
  keys_.resize(rows, 0xcbf29ce484222325ull);
}

float PointNarrowing::narrow(double centred, std::size_t file_row, std::size_t col) const {
  constexpr double max = std::numeric_limits<float>::max();
  if (std::isfinite(centred) && (centred > max || centred < -max))
    throw DataError(where_ + ": row " + std::to_string(file_row) + " column " +
                    std::to_string(col) + " (0-based) lies " + std::to_string(centred) +
                    " from its column's centre, outside the float32 range");
  return static_cast<float>(centred);
}

void PointNarrowing::finish(PointReadResult& result) {
  std::vector<double> shift(cols_, 0.0);
  result.centres.assign(cols_, 0.0);
  for (std::size_t j = 0; j < cols_; ++j) {
    const Column& c = columns_[j];
    if (!fixed_ && c.count > 0) shift[j] = c.sum / static_cast<double>(c.count);
    result.centres[j] = c.centre + shift[j];
  }
  if (std::any_of(shift.begin(), shift.end(), [](double s) { return s != 0.0; }))
    for (std::size_t i = 0; i < points_.rows; ++i) {
      float* row = points_.row(i);
      for (std::size_t j = 0; j < cols_; ++j)
        row[j] = narrow(static_cast<double>(row[j]) - shift[j], i, j);
    }
  // A column whose values differ by less than one float32 step at its largest centred value
  // reads as constant: its differences are lost even after centring.
  std::string lost;
  for (std::size_t j = 0; j < cols_; ++j) {
    const Column& c = columns_[j];
    if (c.count == 0 || !(c.max > c.min)) continue;
    const auto largest = static_cast<float>(
        std::max(std::fabs(c.max - result.centres[j]), std::fabs(c.min - result.centres[j])));
    const float step = std::nextafter(largest, std::numeric_limits<float>::infinity()) - largest;
    if (c.max - c.min < static_cast<double>(step)) {
      lost += (lost.empty() ? "" : ", ") + std::to_string(j);
      if (j < result.column_names.size()) lost += " ('" + printable(result.column_names[j]) + "')";
    }
  }
  if (!lost.empty())
    result.warnings.push_back(where_ + ": column(s) " + lost +
                              " (0-based) vary by less than float32 resolution even after "
                              "centring; their differences are lost");
  points_.row_keys = std::move(keys_);
}

}  // namespace detail
}  // namespace unfurl::io
