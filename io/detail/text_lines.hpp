// Internal: the one delimited-text reader of the project, shared by point sets
// (io/detail/text_points.cpp), edge lists and partial distance matrices:
// - lines end in \n or \r\n; a UTF-8 byte order mark before the first line is skipped; a NUL
//   byte or a carriage return inside a line (CR-only line ends) is refused, naming the line;
// - blank lines and lines whose first non-blank character is '#' are skipped;
// - the delimiter is sniffed from the first content line: the most frequent of tab, comma and
//   semicolon; none of them: runs of spaces or tabs;
// - fields are trimmed of spaces and tabs and may be wrapped in double quotes;
// - numbers are parsed with std::from_chars (decimal point '.', an optional leading '+',
//   "nan" and "inf" accepted); a number beyond the float64 range is an error, one too small
//   for it reads as the nearest subnormal or zero.
// Lines keep their 1-based number so that every error can name it.
#pragma once

#include <cstdio>
#include <filesystem>
#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

namespace unfurl::io::detail {

class LineReader {
 public:
  // Throws MissingInputError when the file cannot be opened.
  explicit LineReader(const std::filesystem::path& path);
  ~LineReader();
  LineReader(const LineReader&) = delete;
  LineReader& operator=(const LineReader&) = delete;

  // The next line without its end-of-line characters; false at the end. Throws IoError when
  // reading fails part way, DataError for a NUL byte or a carriage return inside the line.
  bool next(std::string_view& line);
  std::size_t line_number() const { return number_; }

 private:
  bool refill();
  void check(std::string_view& line);
  std::filesystem::path path_;
  std::FILE* file_ = nullptr;
  std::vector<char> buf_;
  std::size_t begin_ = 0, end_ = 0;
  std::string carry_;  // a line longer than the buffer
  std::size_t number_ = 0;
  bool eof_ = false;
};

std::string_view trim(std::string_view s);

// File text quoted in a message: at most `limit` bytes, anything but printable ASCII as '?',
// so that a damaged file cannot break the one-line message.
std::string printable(std::string_view text, std::size_t limit = 40);

// A comment line (first non-blank character '#') or a blank one.
bool skippable(std::string_view line);

constexpr char kBlankRuns = ' ';  // delimiter meaning "runs of spaces or tabs"

// The delimiter of a file, from its first content line.
char sniff_delimiter(std::string_view line);

// Splits `line` on `delimiter` into trimmed fields (views into line).
void split_fields(std::string_view line, char delimiter, std::vector<std::string_view>& fields);

// A field without its surrounding double quotes, if any.
std::string_view unquote(std::string_view field);

enum class Number { ok, not_number, too_large };
// The whole field as a double.
Number parse_number(std::string_view field, double& value);

}  // namespace unfurl::io::detail
