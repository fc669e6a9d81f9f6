// Internal: line-by-line reading of text inputs (CSV edge lists and matrices) in large
// blocks, with the small parsing helpers they share. Lines keep their 1-based number so
// that every error can name it.
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

  // The next line without its end-of-line characters (\n or \r\n); false at the end.
  // Throws IoError when reading fails part way.
  bool next(std::string_view& line);
  std::size_t line_number() const { return number_; }

 private:
  bool refill();
  std::filesystem::path path_;
  std::FILE* file_ = nullptr;
  std::vector<char> buf_;
  std::size_t begin_ = 0, end_ = 0;
  std::string carry_;  // a line longer than the buffer
  std::size_t number_ = 0;
  bool eof_ = false;
};

std::string_view trim(std::string_view s);

// A comment line (first non-blank character '#') or a blank one.
bool skippable(std::string_view line);

// Splits on commas when the line has any, otherwise on runs of blanks; fields are trimmed.
void split_fields(std::string_view line, std::vector<std::string_view>& fields);

// The whole field as a double (from_chars: also "nan", "inf"); nullopt when it is not one.
std::optional<double> parse_double(std::string_view field);

}  // namespace unfurl::io::detail
