#include "io/detail/npy_matrix.hpp"

#include <cmath>
#include <cstdint>
#include <cstring>
#include <fstream>
#include <limits>
#include <regex>
#include <string>

#include "engine/error.hpp"

namespace unfurl::io::detail {

// The format: magic "\x93NUMPY", major and minor version bytes, a little-endian header
// length (2 bytes in version 1, 4 in versions 2 and 3), then a Python dict literal with
// 'descr', 'fortran_order' and 'shape' (numpy's format.py documents it; from memory).
NpyMatrix read_npy_matrix(const std::filesystem::path& path) {
  const std::string where = path.string();
  std::error_code ec;
  if (!std::filesystem::is_regular_file(path, ec))
    throw MissingInputError(where + ": file does not exist or is not a regular file");
  const std::uintmax_t file_bytes = std::filesystem::file_size(path, ec);
  std::ifstream in(path, std::ios::binary);
  if (!in) throw MissingInputError(where + ": cannot open");
  unsigned char lead[12] = {};
  in.read(reinterpret_cast<char*>(lead), 10);
  if (in.gcount() != 10 || std::memcmp(lead, "\x93NUMPY", 6) != 0)
    throw DataError(where + ": not an NPY file (no \\x93NUMPY magic)");
  const int major = lead[6];
  std::uint32_t header_len = lead[8] | (lead[9] << 8);
  std::size_t prefix = 10;
  if (major == 2 || major == 3) {
    in.read(reinterpret_cast<char*>(lead + 10), 2);
    if (in.gcount() != 2) throw DataError(where + ": NPY header cut short");
    header_len = lead[8] | (lead[9] << 8) | (lead[10] << 16) | (std::uint32_t(lead[11]) << 24);
    prefix = 12;
  } else if (major != 1) {
    throw DataError(where + ": NPY format version " + std::to_string(major) + " not supported");
  }
  if (header_len > (1u << 20) || prefix + header_len > file_bytes)
    throw DataError(where + ": NPY header length " + std::to_string(header_len) + " is invalid");
  std::string header(header_len, '\0');
  in.read(header.data(), header_len);
  if (static_cast<std::uint32_t>(in.gcount()) != header_len)
    throw DataError(where + ": NPY header cut short");

  std::smatch m;
  if (!std::regex_search(header, m, std::regex(R"('descr'\s*:\s*'([^']*)')")))
    throw DataError(where + ": NPY header has no 'descr'");
  const std::string descr = m[1];
  std::size_t element = 0;
  if (descr == "<f4") {
    element = 4;
  } else if (descr == "<f8") {
    element = 8;
  } else {
    throw DataError(where + ": NPY element type '" + descr +
                    "' not supported here (little-endian float32 '<f4' or float64 '<f8')");
  }
  if (!std::regex_search(header, m, std::regex(R"('fortran_order'\s*:\s*(True|False))")))
    throw DataError(where + ": NPY header has no 'fortran_order'");
  if (m[1] == "True")
    throw DataError(where + ": NPY array is in Fortran order; save it in C order");
  if (!std::regex_search(header, m, std::regex(R"('shape'\s*:\s*\(\s*(\d+)\s*,\s*(\d+)\s*\))")))
    throw DataError(where + ": NPY array is not 2-D (shape must be (rows, cols))");
  NpyMatrix out;
  try {
    out.rows = std::stoull(m[1]);
    out.cols = std::stoull(m[2]);
  } catch (const std::exception&) {
    throw DataError(where + ": NPY shape is out of range");
  }
  const std::uintmax_t payload = file_bytes - prefix - header_len;
  if (out.cols != 0 && out.rows > payload / element / out.cols + 1)
    throw DataError(where + ": NPY shape declares more data than the file holds");
  const std::uintmax_t want = static_cast<std::uintmax_t>(out.rows) * out.cols * element;
  if (payload != want)
    throw DataError(where + ": NPY data is " + std::to_string(payload) + " bytes, shape needs " +
                    std::to_string(want));
  const std::size_t count = out.rows * out.cols;
  out.values.resize(count);
  if (element == 4) {
    in.read(reinterpret_cast<char*>(out.values.data()), static_cast<std::streamsize>(count * 4));
    if (static_cast<std::uintmax_t>(in.gcount()) != count * 4)
      throw IoError(where + ": read failed part way");
    return out;
  }
  std::vector<double> block(1 << 16);
  for (std::size_t done = 0; done < count;) {
    const std::size_t take = std::min(block.size(), count - done);
    in.read(reinterpret_cast<char*>(block.data()), static_cast<std::streamsize>(take * 8));
    if (static_cast<std::size_t>(in.gcount()) != take * 8)
      throw IoError(where + ": read failed part way");
    for (std::size_t k = 0; k < take; ++k) {
      const double v = block[k];
      if (std::isfinite(v) && std::abs(v) > std::numeric_limits<float>::max())
        throw DataError(where + ": entry " + std::to_string((done + k) / out.cols) + ", " +
                        std::to_string((done + k) % out.cols) + " = " + std::to_string(v) +
                        " does not fit float32");
      out.values[done + k] = static_cast<float>(v);
    }
    done += take;
  }
  return out;
}

}  // namespace unfurl::io::detail
