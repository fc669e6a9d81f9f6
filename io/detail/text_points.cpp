// CSV/TSV point reader. Lines starting with '#' and blank lines are skipped; the first other
// line is a header when one of its fields is not a number; the delimiter is sniffed from that
// line (the most frequent of tab, comma, semicolon; none of them: runs of spaces or tabs).
// Every data line must have the same number of fields. Numbers are parsed with
// std::from_chars (decimal point '.', "nan" and "inf" accepted and left to the NaN check).
#include <algorithm>
#include <charconv>
#include <cmath>
#include <cstdlib>
#include <fstream>
#include <limits>
#include <string_view>

#include "engine/error.hpp"
#include "io/detail/point_formats.hpp"

namespace unfurl::io::detail {

namespace {

constexpr char kWhitespace = ' ';  // delimiter value meaning "runs of spaces or tabs"

std::string_view trim(std::string_view s) {
  while (!s.empty() && (s.front() == ' ' || s.front() == '\t')) s.remove_prefix(1);
  while (!s.empty() && (s.back() == ' ' || s.back() == '\t' || s.back() == '\r'))
    s.remove_suffix(1);
  return s;
}

std::string_view unquote(std::string_view s) {
  if (s.size() >= 2 && s.front() == '"' && s.back() == '"') return s.substr(1, s.size() - 2);
  return s;
}

// Splits `line` into `fields` (views into line).
void split(std::string_view line, char delimiter, std::vector<std::string_view>& fields) {
  fields.clear();
  if (delimiter == kWhitespace) {
    std::size_t i = 0;
    while (true) {
      while (i < line.size() && (line[i] == ' ' || line[i] == '\t' || line[i] == '\r')) ++i;
      if (i >= line.size()) return;
      const std::size_t start = i;
      while (i < line.size() && line[i] != ' ' && line[i] != '\t' && line[i] != '\r') ++i;
      fields.push_back(line.substr(start, i - start));
    }
  }
  std::size_t start = 0;
  while (true) {
    const std::size_t at = line.find(delimiter, start);
    fields.push_back(trim(line.substr(start, at == std::string_view::npos ? at : at - start)));
    if (at == std::string_view::npos) return;
    start = at + 1;
  }
}

enum class Number { ok, not_number, too_large };

Number parse_number(std::string_view s, double& value) {
  s = unquote(s);
  if (!s.empty() && s.front() == '+') s.remove_prefix(1);
  if (s.empty()) return Number::not_number;
  const auto [end, ec] = std::from_chars(s.data(), s.data() + s.size(), value);
  if (end != s.data() + s.size()) return Number::not_number;
  if (ec == std::errc::result_out_of_range) {
    // from_chars leaves the value alone; strtod tells overflow (HUGE_VAL, an error) from
    // underflow (the nearest subnormal or zero, a value like any other).
    const std::string copy(s);
    value = std::strtod(copy.c_str(), nullptr);
    return std::isinf(value) ? Number::too_large : Number::ok;
  }
  return ec == std::errc() ? Number::ok : Number::not_number;
}

char sniff_delimiter(std::string_view line) {
  const std::pair<char, long> counts[] = {{'\t', std::count(line.begin(), line.end(), '\t')},
                                          {',', std::count(line.begin(), line.end(), ',')},
                                          {';', std::count(line.begin(), line.end(), ';')}};
  const auto best = std::max_element(
      counts, counts + 3, [](const auto& a, const auto& b) { return a.second < b.second; });
  return best->second > 0 ? best->first : kWhitespace;
}

bool is_content(std::string_view line) {
  const std::string_view t = trim(line);
  return !t.empty() && t.front() != '#';
}

// A UTF-8 byte order mark (as some spreadsheet programs write) is not part of the first field.
void strip_bom(std::string& line) {
  if (line.rfind("\xEF\xBB\xBF", 0) == 0) line.erase(0, 3);
}

}  // namespace

TextLayout scan_text_layout(const std::filesystem::path& file, const std::string& format) {
  std::ifstream in(file, std::ios::binary);
  if (!in) throw MissingInputError(file.string() + ": cannot be opened for reading");
  TextLayout layout;
  std::string line;
  std::vector<std::string_view> fields;
  bool first = true;
  for (std::size_t line_no = 1; std::getline(in, line); ++line_no) {
    if (line_no == 1) strip_bom(line);
    if (!is_content(line)) continue;
    if (first) {
      first = false;
      layout.delimiter = format == "tsv" ? '\t' : sniff_delimiter(line);
      split(line, layout.delimiter, fields);
      layout.columns = fields.size();
      double ignored = 0;
      if (std::any_of(fields.begin(), fields.end(), [&](std::string_view f) {
            return parse_number(f, ignored) == Number::not_number;
          })) {
        for (std::string_view f : fields) layout.column_names.emplace_back(unquote(f));
        continue;
      }
    }
    ++layout.data_rows;
  }
  if (in.bad()) throw IoError(file.string() + ": read failed part way");
  return layout;
}

void read_text_points(const std::filesystem::path& file, const PointReadOptions& options,
                      const std::string& format, PointReadResult& result) {
  const std::string name = file.string();
  std::ifstream in(file, std::ios::binary);
  if (!in) throw MissingInputError(name + ": cannot be opened for reading");
  std::vector<char> stream_buffer(std::size_t{1} << 20);
  in.rdbuf()->pubsetbuf(stream_buffer.data(), static_cast<std::streamsize>(stream_buffer.size()));
  result.source_type = "text";

  const std::size_t begin = options.rows ? options.rows->begin : 0;
  const std::size_t end = options.rows && options.rows->end
                              ? *options.rows->end
                              : std::numeric_limits<std::size_t>::max();
  std::error_code ec;
  const auto bytes = std::filesystem::file_size(file, ec);
  if (!ec && !options.rows) result.points.values.reserve(static_cast<std::size_t>(bytes / 8));
  std::optional<PointNarrowing> narrowing;  // once the column count is known

  std::string line;
  std::vector<std::string_view> fields;
  std::size_t line_no = 0, data_rows = 0, cols = 0;
  char delimiter = format == "tsv" ? '\t' : 0;
  while (std::getline(in, line)) {
    if (++line_no % 65536 == 0) options.stop.check("reading points");
    if (line_no == 1) strip_bom(line);
    if (!is_content(line)) continue;
    if (delimiter == 0) delimiter = sniff_delimiter(line);
    split(line, delimiter, fields);
    if (cols == 0) {
      cols = fields.size();
      double ignored = 0;
      const bool header = std::any_of(fields.begin(), fields.end(), [&](std::string_view f) {
        return parse_number(f, ignored) == Number::not_number;
      });
      if (header) {
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
  if (in.bad())
    throw IoError(name + ": read failed part way after line " + std::to_string(line_no));
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
