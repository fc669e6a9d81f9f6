#include "io/detail/text_lines.hpp"

#include <cerrno>
#include <charconv>
#include <cstring>
#include <limits>

#include "engine/error.hpp"

namespace unfurl::io::detail {

LineReader::LineReader(const std::filesystem::path& path) : path_(path), buf_(1 << 20) {
  std::error_code ec;
  if (!std::filesystem::is_regular_file(path_, ec))
    throw MissingInputError(path_.string() + ": file does not exist or is not a regular file");
  file_ = std::fopen(path_.c_str(), "rb");
  if (!file_) throw MissingInputError(path_.string() + ": cannot open: " + std::strerror(errno));
}

LineReader::~LineReader() {
  if (file_) std::fclose(file_);
}

bool LineReader::refill() {
  if (eof_) return false;
  const std::size_t got = std::fread(buf_.data(), 1, buf_.size(), file_);
  if (got < buf_.size()) {
    if (std::ferror(file_))
      throw IoError(path_.string() + ": read failed after line " + std::to_string(number_));
    eof_ = true;
  }
  begin_ = 0;
  end_ = got;
  return got > 0;
}

bool LineReader::next(std::string_view& line) {
  carry_.clear();
  for (;;) {
    if (begin_ == end_ && !refill()) {
      if (carry_.empty()) return false;
      break;  // last line without a newline
    }
    const char* start = buf_.data() + begin_;
    const void* nl = std::memchr(start, '\n', end_ - begin_);
    if (nl) {
      const std::size_t len = static_cast<const char*>(nl) - start;
      begin_ += len + 1;
      ++number_;
      if (carry_.empty()) {
        line = std::string_view(start, len);
      } else {
        carry_.append(start, len);
        line = carry_;
      }
      if (!line.empty() && line.back() == '\r') line.remove_suffix(1);
      return true;
    }
    carry_.append(start, end_ - begin_);
    begin_ = end_;
  }
  ++number_;
  line = carry_;
  if (!line.empty() && line.back() == '\r') line.remove_suffix(1);
  return true;
}

std::string_view trim(std::string_view s) {
  while (!s.empty() && (s.front() == ' ' || s.front() == '\t')) s.remove_prefix(1);
  while (!s.empty() && (s.back() == ' ' || s.back() == '\t')) s.remove_suffix(1);
  return s;
}

bool skippable(std::string_view line) {
  const std::string_view t = trim(line);
  return t.empty() || t.front() == '#';
}

void split_fields(std::string_view line, std::vector<std::string_view>& fields) {
  fields.clear();
  if (line.find(',') != std::string_view::npos) {
    std::size_t start = 0;
    for (;;) {
      const std::size_t comma = line.find(',', start);
      fields.push_back(trim(line.substr(start, comma - start)));
      if (comma == std::string_view::npos) break;
      start = comma + 1;
    }
    return;
  }
  std::size_t i = 0;
  while (i < line.size()) {
    while (i < line.size() && (line[i] == ' ' || line[i] == '\t')) ++i;
    const std::size_t start = i;
    while (i < line.size() && line[i] != ' ' && line[i] != '\t') ++i;
    if (i > start) fields.push_back(line.substr(start, i - start));
  }
}

std::optional<double> parse_double(std::string_view field) {
  if (field.empty()) return std::nullopt;
  if (field.front() == '+') field.remove_prefix(1);  // from_chars refuses a leading '+'
  double v = 0.0;
  const auto r = std::from_chars(field.data(), field.data() + field.size(), v);
  if (r.ec == std::errc::result_out_of_range) {
    // Too large for a double: an infinity of the right sign (then refused by the caller);
    // too small: zero.
    const bool negative = field.front() == '-';
    const std::size_t e = field.find_first_of("eE");
    const bool huge = e == std::string_view::npos || e + 1 >= field.size() || field[e + 1] != '-';
    const double inf = std::numeric_limits<double>::infinity();
    return huge ? (negative ? -inf : inf) : 0.0;
  }
  if (r.ec != std::errc() || r.ptr != field.data() + field.size()) return std::nullopt;
  return v;
}

}  // namespace unfurl::io::detail
