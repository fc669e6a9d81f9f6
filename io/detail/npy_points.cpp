// NPY point reader. Format: numpy.lib.format (NEP 1, "A Simple File Format for NumPy
// Arrays"): magic "\x93NUMPY", major and minor version bytes, a little-endian header length
// (uint16 in version 1.0, uint32 in 2.0 and 3.0), then a Python dict literal with 'descr',
// 'fortran_order' and 'shape', padded so that the data starts aligned; then the raw data.
#include <algorithm>
#include <array>
#include <bit>
#include <charconv>
#include <cmath>
#include <cstring>
#include <fstream>
#include <limits>

#include "engine/error.hpp"
#include "io/detail/point_formats.hpp"

namespace unfurl::io::detail {

namespace {

std::string dict_value(const std::string& dict, const std::string& key, const std::string& where) {
  const std::string quoted[2] = {"'" + key + "'", "\"" + key + "\""};
  std::size_t pos = std::string::npos;
  for (const auto& q : quoted)
    if ((pos = dict.find(q)) != std::string::npos) {
      pos += q.size();
      break;
    }
  if (pos == std::string::npos) throw DataError(where + ": NPY header lacks '" + key + "'");
  pos = dict.find(':', pos);
  if (pos == std::string::npos)
    throw DataError(where + ": NPY header is malformed at '" + key + "'");
  ++pos;
  while (pos < dict.size() && dict[pos] == ' ') ++pos;
  if (pos >= dict.size()) throw DataError(where + ": NPY header is malformed at '" + key + "'");
  const char open = dict[pos];
  const char close = open == '(' ? ')' : open == '[' ? ']' : open;
  if (open == '(' || open == '[' || open == '\'' || open == '"') {
    const std::size_t end = dict.find(close, pos + 1);
    if (end == std::string::npos)
      throw DataError(where + ": NPY header is malformed at '" + key + "'");
    return dict.substr(pos, end - pos + 1);
  }
  const std::size_t end = dict.find_first_of(",}", pos);
  return dict.substr(pos, end == std::string::npos ? std::string::npos : end - pos);
}

}  // namespace

NpyHeader read_npy_header(std::istream& in, std::uint64_t file_size, const std::string& where) {
  std::array<unsigned char, 10> pre{};
  in.read(reinterpret_cast<char*>(pre.data()), 8);
  if (in.gcount() != 8 || std::memcmp(pre.data(), "\x93NUMPY", 6) != 0)
    throw IoError(where + ": not an NPY file (no \\x93NUMPY signature)");
  const unsigned major = pre[6];
  std::uint64_t header_len = 0, offset = 0;
  if (major == 1) {
    in.read(reinterpret_cast<char*>(pre.data() + 8), 2);
    if (in.gcount() != 2) throw IoError(where + ": NPY header is truncated");
    header_len = pre[8] | (std::uint64_t{pre[9]} << 8);
    offset = 10;
  } else if (major == 2 || major == 3) {
    std::array<unsigned char, 4> len{};
    in.read(reinterpret_cast<char*>(len.data()), 4);
    if (in.gcount() != 4) throw IoError(where + ": NPY header is truncated");
    header_len = len[0] | (std::uint64_t{len[1]} << 8) | (std::uint64_t{len[2]} << 16) |
                 (std::uint64_t{len[3]} << 24);
    offset = 12;
  } else {
    throw DataError(where + ": NPY format version " + std::to_string(major) + "." +
                    std::to_string(pre[7]) + " is not supported (1.0, 2.0, 3.0 are)");
  }
  if (offset + header_len > file_size) throw IoError(where + ": NPY header is truncated");
  std::string dict(static_cast<std::size_t>(header_len), '\0');
  in.read(dict.data(), static_cast<std::streamsize>(header_len));
  if (static_cast<std::uint64_t>(in.gcount()) != header_len)
    throw IoError(where + ": NPY header is truncated");

  NpyHeader h;
  h.major = major;
  h.minor = pre[7];
  h.data_offset = offset + header_len;
  const std::string descr = dict_value(dict, "descr", where);
  if (descr.size() < 3 || (descr.front() != '\'' && descr.front() != '"'))
    throw DataError(where + ": NPY dtype " + printable(descr) +
                    " is structured; points need plain numbers");
  h.descr = descr.substr(1, descr.size() - 2);
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

  std::string fortran = dict_value(dict, "fortran_order", where);
  while (!fortran.empty() && fortran.back() == ' ') fortran.pop_back();
  if (fortran == "True")
    h.fortran = true;
  else if (fortran != "False")
    throw DataError(where + ": NPY header has fortran_order " + printable(fortran));

  const std::string shape = dict_value(dict, "shape", where);
  std::size_t pos = 1;
  while (pos < shape.size()) {
    while (pos < shape.size() && (shape[pos] == ' ' || shape[pos] == ',' || shape[pos] == 'L'))
      ++pos;
    if (pos >= shape.size() || shape[pos] == ')') break;
    std::size_t value = 0;
    const char* first = shape.data() + pos;
    const auto [end, ec] = std::from_chars(first, shape.data() + shape.size(), value);
    if (ec != std::errc()) throw DataError(where + ": NPY header has shape " + printable(shape));
    h.shape.push_back(value);
    pos += static_cast<std::size_t>(end - first);
  }
  return h;
}

namespace {

template <class T>
double load(const unsigned char* p, bool swap) {
  std::array<unsigned char, sizeof(T)> bytes;
  std::memcpy(bytes.data(), p, sizeof(T));
  if (swap) std::reverse(bytes.begin(), bytes.end());
  T v;
  std::memcpy(&v, bytes.data(), sizeof(T));
  return static_cast<double>(v);
}

double load_value(const NpyHeader& h, const unsigned char* p) {
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

}  // namespace

std::string NpyHeader::type_name() const {
  if (kind == 'f') return item == 4 ? "float32" : "float64";
  return (kind == 'u' ? "uint" : "int") + std::to_string(item * 8);
}

void read_npy_points(const std::filesystem::path& file, const PointReadOptions& options,
                     PointReadResult& result) {
  const std::string where = file.string();
  std::error_code ec;
  const std::uint64_t file_size = std::filesystem::file_size(file, ec);
  if (ec) throw MissingInputError(where + ": cannot be read (" + ec.message() + ")");
  std::ifstream in(file, std::ios::binary);
  if (!in) throw MissingInputError(where + ": cannot be opened for reading");
  const NpyHeader h = read_npy_header(in, file_size, where);
  result.source_type = h.type_name();
  if (h.shape.empty() || h.shape.size() > 2)
    throw DataError(where + ": NPY array is " + std::to_string(h.shape.size()) +
                    "-D; points need a 2-D array (a 1-D array is read as one column)");
  const std::size_t rows = h.shape[0];
  const std::size_t cols = h.shape.size() == 2 ? h.shape[1] : 1;
  result.file_rows = rows;
  if (rows == 0 || cols == 0)
    throw DataError(where + ": has " + std::to_string(rows) + " rows and " + std::to_string(cols) +
                    " columns; points need at least one of each");
  if (rows > std::numeric_limits<std::uint64_t>::max() / cols / h.item)
    throw DataError(where + ": NPY shape is too large to address");
  const std::uint64_t data_bytes = std::uint64_t{rows} * cols * h.item;
  if (file_size - h.data_offset < data_bytes)
    throw IoError(where + ": truncated: the NPY header promises " + std::to_string(data_bytes) +
                  " bytes of data, the file holds " + std::to_string(file_size - h.data_offset));
  const RowWindow w = resolve_rows(options.rows, rows, where);
  result.points = allocate_points(w.size(), cols, where);

  PointNarrowing narrowing(result.points, options.centres, where);
  if (h.kind == 'f' && h.item == sizeof(float) && !h.swap && !h.fortran) {
    // The stored bytes are already the PointSet layout: read them in place, then centre.
    in.seekg(static_cast<std::streamoff>(h.data_offset + std::uint64_t{w.begin} * cols * h.item));
    const auto bytes = static_cast<std::streamsize>(result.points.values.size() * sizeof(float));
    in.read(reinterpret_cast<char*>(result.points.values.data()), bytes);
    if (in.gcount() != bytes) throw IoError(where + ": read failed part way (truncated file?)");
    for (std::size_t i = 0; i < w.size(); ++i)
      for (std::size_t j = 0; j < cols; ++j)
        narrowing.put(i, j, result.points.row(i)[j], w.begin + i);
    narrowing.finish(result);
    return;
  }
  // Runs of contiguous file values: a row (C order) or a column's slice (Fortran order).
  const std::size_t run = h.fortran ? w.size() : w.size() * cols;
  const std::size_t runs = h.fortran ? cols : 1;
  std::vector<unsigned char> buffer(std::min<std::size_t>(run * h.item, std::size_t{4} << 20));
  const std::size_t per_read = buffer.size() / h.item;
  for (std::size_t j = 0; j < runs; ++j) {
    const std::uint64_t first =
        h.fortran ? std::uint64_t{j} * rows + w.begin : std::uint64_t{w.begin} * cols;
    in.seekg(static_cast<std::streamoff>(h.data_offset + first * h.item));
    for (std::size_t done = 0; done < run;) {
      options.stop.check("reading points");
      const std::size_t n = std::min(per_read, run - done);
      in.read(reinterpret_cast<char*>(buffer.data()), static_cast<std::streamsize>(n * h.item));
      if (static_cast<std::size_t>(in.gcount()) != n * h.item)
        throw IoError(where + ": read failed part way (truncated file?)");
      for (std::size_t k = 0; k < n; ++k) {
        const std::size_t at = done + k;
        const std::size_t row = h.fortran ? at : at / cols;
        const std::size_t col = h.fortran ? j : at % cols;
        narrowing.put(row, col, load_value(h, buffer.data() + k * h.item), w.begin + row);
      }
      done += n;
    }
  }
  narrowing.finish(result);
}

}  // namespace unfurl::io::detail
