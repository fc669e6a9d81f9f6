#include "io/detail/npy_array.hpp"

#include <bit>
#include <charconv>
#include <cstring>
#include <limits>
#include <string_view>

#include "io/detail/point_formats.hpp"

namespace unfurl::io::detail {

namespace {

// The header dict, parsed as strictly as numpy writes it: '{', exactly the three keys (any
// order, either quote), a trailing comma allowed, '}', then only spaces up to the '\n'.
class HeaderDict {
 public:
  HeaderDict(std::string_view text, const std::string& where) : s_(text), where_(where) {}

  void parse(NpyHeader& h, std::string& descr, std::string& fortran) {
    expect('{');
    bool seen[3] = {false, false, false};
    while (true) {
      skip_blanks();
      if (peek() == '}') break;
      const std::string key = quoted("a key");
      expect(':');
      skip_blanks();
      if (key == "descr" && !seen[0]) {
        seen[0] = true;
        if (peek() == '[')
          fail("'descr' is a list (a structured dtype); points need plain numbers");
        descr = quoted("'descr'");
      } else if (key == "fortran_order" && !seen[1]) {
        seen[1] = true;
        fortran = word();
      } else if (key == "shape" && !seen[2]) {
        seen[2] = true;
        shape(h.shape);
      } else {
        fail("unexpected or repeated key '" + printable(key) + "'");
      }
      skip_blanks();
      if (peek() == ',')
        ++pos_;
      else if (peek() != '}')
        fail("expected ',' or '}' after '" + key + "'");
    }
    ++pos_;
    for (; pos_ < s_.size(); ++pos_)
      if (s_[pos_] != ' ' && s_[pos_] != '\n' && s_[pos_] != '\t')
        fail("text after the closing '}'");
    if (!seen[0] || !seen[1] || !seen[2])
      fail(std::string("lacks '") +
           (!seen[0]   ? "descr"
            : !seen[1] ? "fortran_order"
                       : "shape") +
           "'");
  }

 private:
  [[noreturn]] void fail(const std::string& what) const {
    throw DataError(where_ + ": malformed NPY header: " + what + " (header '" + printable(s_, 80) +
                    "')");
  }
  char peek() const { return pos_ < s_.size() ? s_[pos_] : '\0'; }
  void skip_blanks() {
    while (pos_ < s_.size() && (s_[pos_] == ' ' || s_[pos_] == '\t')) ++pos_;
  }
  void expect(char c) {
    skip_blanks();
    if (peek() != c) fail(std::string("expected '") + c + "'");
    ++pos_;
  }
  std::string quoted(const char* what) {
    skip_blanks();
    const char q = peek();
    if (q != '\'' && q != '"') fail(std::string("expected ") + what + " in quotes");
    const std::size_t end = s_.find(q, pos_ + 1);
    if (end == std::string_view::npos) fail(std::string("unterminated ") + what);
    std::string out(s_.substr(pos_ + 1, end - pos_ - 1));
    pos_ = end + 1;
    return out;
  }
  std::string word() {
    const std::size_t start = pos_;
    while (pos_ < s_.size() && std::isalpha(static_cast<unsigned char>(s_[pos_]))) ++pos_;
    return std::string(s_.substr(start, pos_ - start));
  }
  void shape(std::vector<std::size_t>& out) {
    expect('(');
    while (true) {
      skip_blanks();
      if (peek() == ')') break;
      std::size_t v = 0;
      const auto [end, ec] = std::from_chars(s_.data() + pos_, s_.data() + s_.size(), v);
      if (ec != std::errc()) fail("'shape' holds something other than non-negative integers");
      pos_ = static_cast<std::size_t>(end - s_.data());
      if (peek() == 'L') ++pos_;  // written by Python 2
      out.push_back(v);
      skip_blanks();
      if (peek() == ',')
        ++pos_;
      else if (peek() != ')')
        fail("expected ',' or ')' in 'shape'");
    }
    ++pos_;
  }

  std::string_view s_;
  const std::string& where_;
  std::size_t pos_ = 0;
};

template <class T>
double load(const unsigned char* p, bool swap) {
  std::array<unsigned char, sizeof(T)> bytes;
  std::memcpy(bytes.data(), p, sizeof(T));
  if (swap) std::reverse(bytes.begin(), bytes.end());
  T v;
  std::memcpy(&v, bytes.data(), sizeof(T));
  return static_cast<double>(v);
}

}  // namespace

std::string NpyHeader::type_name() const {
  if (kind == 'f') return item == 4 ? "float32" : "float64";
  return (kind == 'u' ? "uint" : "int") + std::to_string(item * 8);
}

NpyHeader read_npy_header(std::istream& in, std::uint64_t file_size, const std::string& where) {
  std::array<unsigned char, 12> pre{};
  in.read(reinterpret_cast<char*>(pre.data()), 8);
  if (in.gcount() != 8 || std::memcmp(pre.data(), "\x93NUMPY", 6) != 0)
    throw DataError(where + ": not an NPY file (no \\x93NUMPY signature)");
  const unsigned major = pre[6];
  if (major < 1 || major > 3)
    throw DataError(where + ": NPY format version " + std::to_string(major) + "." +
                    std::to_string(pre[7]) + " is not supported (1.0, 2.0, 3.0 are)");
  const std::size_t len_bytes = major == 1 ? 2 : 4;
  in.read(reinterpret_cast<char*>(pre.data() + 8), static_cast<std::streamsize>(len_bytes));
  if (static_cast<std::size_t>(in.gcount()) != len_bytes)
    throw IoError(where + ": NPY header is truncated");
  std::uint64_t header_len = 0;
  for (std::size_t b = len_bytes; b-- > 0;) header_len = (header_len << 8) | pre[8 + b];
  const std::uint64_t offset = 8 + len_bytes;
  if (offset + header_len > file_size) throw IoError(where + ": NPY header is truncated");
  std::string dict(static_cast<std::size_t>(header_len), '\0');
  in.read(dict.data(), static_cast<std::streamsize>(header_len));
  if (static_cast<std::uint64_t>(in.gcount()) != header_len)
    throw IoError(where + ": NPY header is truncated");

  NpyHeader h;
  h.major = major;
  h.minor = pre[7];
  h.data_offset = offset + header_len;
  std::string fortran;
  HeaderDict(dict, where).parse(h, h.descr, fortran);
  if (fortran == "True")
    h.fortran = true;
  else if (fortran != "False")
    throw DataError(where + ": malformed NPY header: fortran_order is '" + printable(fortran) +
                    "', not True or False");
  if (h.descr.size() < 3)
    throw DataError(where + ": NPY dtype '" + printable(h.descr) + "' is not numeric");
  const char order = h.descr[0];
  h.kind = h.descr[1];
  const std::string size_text = h.descr.substr(2);
  const bool known_size =
      size_text == "1" || size_text == "2" || size_text == "4" || size_text == "8";
  h.item = known_size ? static_cast<std::size_t>(size_text[0] - '0') : 0;
  const bool ok_kind = (h.kind == 'f' && (h.item == 4 || h.item == 8)) ||
                       ((h.kind == 'i' || h.kind == 'u') && h.item > 0);
  if (!ok_kind || (order != '<' && order != '>' && order != '|' && order != '='))
    throw DataError(where + ": NPY dtype '" + printable(h.descr) +
                    "' is not supported (f4, f8, i1..i8, u1..u8 in either byte order)");
  const bool file_little =
      order == '<' || order == '|' || (order == '=' && std::endian::native == std::endian::little);
  h.swap = h.item > 1 && file_little != (std::endian::native == std::endian::little);
  return h;
}

NpyArray open_npy(const std::filesystem::path& file, const std::string& where) {
  std::error_code ec;
  if (!std::filesystem::is_regular_file(file, ec))
    throw MissingInputError(where + ": no such file, or not a regular file");
  const std::uint64_t file_size = std::filesystem::file_size(file, ec);
  if (ec) throw MissingInputError(where + ": cannot be read (" + ec.message() + ")");
  NpyArray a;
  a.in.open(file, std::ios::binary);
  if (!a.in) throw MissingInputError(where + ": cannot be opened for reading");
  a.header = read_npy_header(a.in, file_size, where);
  const NpyHeader& h = a.header;
  if (h.shape.empty() || h.shape.size() > 2)
    throw DataError(where + ": NPY array is " + std::to_string(h.shape.size()) +
                    "-D; a 2-D array is needed (a 1-D array is read as one column)");
  a.rows = h.shape[0];
  a.cols = h.shape.size() == 2 ? h.shape[1] : 1;
  if (a.cols != 0 && a.rows > std::numeric_limits<std::uint64_t>::max() / a.cols / h.item)
    throw DataError(where + ": NPY shape is too large to address");
  const std::uint64_t data_bytes = std::uint64_t{a.rows} * a.cols * h.item;
  const std::uint64_t stored = file_size - h.data_offset;
  if (stored < data_bytes)
    throw IoError(where + ": truncated: the NPY header promises " + std::to_string(data_bytes) +
                  " bytes of data, the file holds " + std::to_string(stored));
  if (stored > data_bytes)
    throw DataError(where + ": " + std::to_string(stored - data_bytes) +
                    " bytes of trailing data after the NPY array (" + std::to_string(data_bytes) +
                    " bytes for shape " + std::to_string(a.rows) + " x " + std::to_string(a.cols) +
                    ")");
  return a;
}

double npy_value(const NpyHeader& h, const unsigned char* p) {
  switch (h.kind) {
    case 'f':
      return h.item == 4 ? load<float>(p, h.swap) : load<double>(p, h.swap);
    case 'i':
      switch (h.item) {
        case 1:
          return load<std::int8_t>(p, false);
        case 2:
          return load<std::int16_t>(p, h.swap);
        case 4:
          return load<std::int32_t>(p, h.swap);
        default:
          return load<std::int64_t>(p, h.swap);
      }
    default:
      switch (h.item) {
        case 1:
          return load<std::uint8_t>(p, false);
        case 2:
          return load<std::uint16_t>(p, h.swap);
        case 4:
          return load<std::uint32_t>(p, h.swap);
        default:
          return load<std::uint64_t>(p, h.swap);
      }
  }
}

}  // namespace unfurl::io::detail
