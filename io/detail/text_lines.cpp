#include "io/detail/text_lines.hpp"

#include <algorithm>
#include <cerrno>
#include <charconv>
#include <cmath>
#include <cstdlib>
#include <cstring>

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

void LineReader::check(std::string_view& line) {
  if (!line.empty() && line.back() == '\r') line.remove_suffix(1);
  // A UTF-8 byte order mark (as some spreadsheet programs write) is not part of the text.
  if (number_ == 1 && line.substr(0, 3) == "\xEF\xBB\xBF") line.remove_prefix(3);
  if (std::memchr(line.data(), '\0', line.size()))
    throw DataError(path_.string() + ": line " + std::to_string(number_) +
                    " holds a NUL byte (binary data, not text)");
  if (std::memchr(line.data(), '\r', line.size()))
    throw DataError(path_.string() + ": line " + std::to_string(number_) +
                    " holds a carriage return inside the line (CR-only line ends?); lines must "
                    "end in \\n or \\r\\n");
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
      check(line);
      return true;
    }
    carry_.append(start, end_ - begin_);
    begin_ = end_;
  }
  ++number_;
  line = carry_;
  check(line);
  return true;
}

std::string_view trim(std::string_view s) {
  while (!s.empty() && (s.front() == ' ' || s.front() == '\t')) s.remove_prefix(1);
  while (!s.empty() && (s.back() == ' ' || s.back() == '\t')) s.remove_suffix(1);
  return s;
}

std::string printable(std::string_view text, std::size_t limit) {
  std::string out;
  for (char c : text.substr(0, limit)) out += (c >= 0x20 && c < 0x7f) ? c : '?';
  if (text.size() > limit) out += "...";
  return out;
}

bool skippable(std::string_view line) {
  const std::string_view t = trim(line);
  return t.empty() || t.front() == '#';
}

char sniff_delimiter(std::string_view line) {
  const std::pair<char, long> counts[] = {{'\t', std::count(line.begin(), line.end(), '\t')},
                                          {',', std::count(line.begin(), line.end(), ',')},
                                          {';', std::count(line.begin(), line.end(), ';')}};
  const auto best = std::max_element(
      counts, counts + 3, [](const auto& a, const auto& b) { return a.second < b.second; });
  return best->second > 0 ? best->first : kBlankRuns;
}

void split_fields(std::string_view line, char delimiter, std::vector<std::string_view>& fields) {
  fields.clear();
  if (delimiter == kBlankRuns) {
    std::size_t i = 0;
    while (true) {
      while (i < line.size() && (line[i] == ' ' || line[i] == '\t')) ++i;
      if (i >= line.size()) return;
      const std::size_t start = i;
      while (i < line.size() && line[i] != ' ' && line[i] != '\t') ++i;
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

std::string_view unquote(std::string_view s) {
  if (s.size() >= 2 && s.front() == '"' && s.back() == '"') return s.substr(1, s.size() - 2);
  return s;
}

Number parse_number(std::string_view s, double& value) {
  s = unquote(s);
  if (!s.empty() && s.front() == '+') s.remove_prefix(1);  // from_chars refuses a '+'
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

}  // namespace unfurl::io::detail
