// CSV/TSV point reader over the shared delimited-text reader (io/detail/text_lines.hpp): the
// first content line is a header when one of its fields is not a number; every data line
// must have as many fields as the first content line.
#include <algorithm>
#include <limits>

#include "engine/error.hpp"
#include "io/detail/point_formats.hpp"
#include "io/detail/text_lines.hpp"

namespace unfurl::io::detail {

namespace {

bool is_header(const std::vector<std::string_view>& fields) {
  double ignored = 0;
  return std::any_of(fields.begin(), fields.end(), [&](std::string_view f) {
    return parse_number(f, ignored) == Number::not_number;
  });
}

}  // namespace

TextLayout scan_text_layout(const std::filesystem::path& file, const std::string& format) {
  LineReader lines(file);
  TextLayout layout;
  std::string_view line;
  std::vector<std::string_view> fields;
  bool first = true;
  while (lines.next(line)) {
    if (skippable(line)) continue;
    if (first) {
      first = false;
      layout.delimiter = format == "tsv" ? '\t' : sniff_delimiter(line);
      split_fields(line, layout.delimiter, fields);
      layout.columns = fields.size();
      if (is_header(fields)) {
        for (std::string_view f : fields) layout.column_names.emplace_back(unquote(f));
        continue;
      }
    }
    ++layout.data_rows;
  }
  return layout;
}

void read_text_points(const std::filesystem::path& file, const PointReadOptions& options,
                      const std::string& format, PointReadResult& result) {
  const std::string name = file.string();
  LineReader lines(file);
  result.source_type = "text";

  const std::size_t begin = options.rows ? options.rows->begin : 0;
  const std::size_t end = options.rows && options.rows->end
                              ? *options.rows->end
                              : std::numeric_limits<std::size_t>::max();
  std::error_code ec;
  const auto bytes = std::filesystem::file_size(file, ec);
  if (!ec && !options.rows) result.points.values.reserve(static_cast<std::size_t>(bytes / 8));
  std::optional<PointNarrowing> narrowing;  // once the column count is known

  std::string_view line;
  std::vector<std::string_view> fields;
  std::size_t data_rows = 0, cols = 0;
  char delimiter = format == "tsv" ? '\t' : 0;
  while (lines.next(line)) {
    const std::size_t line_no = lines.line_number();
    if (line_no % 65536 == 0) options.stop.check("reading points");
    if (skippable(line)) continue;
    if (delimiter == 0) delimiter = sniff_delimiter(line);
    split_fields(line, delimiter, fields);
    if (cols == 0) {
      cols = fields.size();
      if (is_header(fields)) {
        for (std::string_view f : fields) result.column_names.emplace_back(unquote(f));
        continue;
      }
    }
    if (fields.size() != cols)
      throw DataError(name + " line " + std::to_string(line_no) + ": " +
                      std::to_string(fields.size()) + " fields where " + std::to_string(cols) +
                      " were expected (ragged rows)");
    const std::size_t row = data_rows++;
    if (row < begin || row >= end) continue;
    if (!narrowing) {
      result.points.cols = cols;
      narrowing.emplace(result.points, options.centres, name);
    }
    const std::size_t kept = result.points.rows;
    narrowing->grow(kept + 1);
    for (std::size_t j = 0; j < cols; ++j) {
      double v = 0;
      const Number parsed = parse_number(fields[j], v);
      if (parsed != Number::ok)
        throw DataError(name + " line " + std::to_string(line_no) + ", column " +
                        std::to_string(j + 1) + ": '" + printable(fields[j]) +
                        (parsed == Number::too_large ? "' lies outside the float64 range"
                                                     : "' is not a number"));
      try {
        narrowing->put(kept, j, v, row);
      } catch (const DataError&) {
        throw DataError(name + " line " + std::to_string(line_no) + ", column " +
                        std::to_string(j + 1) + ": '" + printable(fields[j]) +
                        "' lies outside the float32 range (after subtracting the column centre)");
      }
    }
  }
  result.file_rows = data_rows;
  if (data_rows == 0 || cols == 0)
    throw DataError(
        name + ": holds no data rows" +
        (result.column_names.empty() ? std::string() : std::string(" (only a header)")));
  const RowWindow w = resolve_rows(options.rows, data_rows, name);
  if (!narrowing || result.points.rows != w.size())
    throw InternalError(name + ": text reader kept " + std::to_string(result.points.rows) +
                        " rows for " + std::to_string(w.size()));
  narrowing->finish(result);
}

}  // namespace unfurl::io::detail
