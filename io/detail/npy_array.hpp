// Internal: the one NPY reader of the project, for point sets (io/points_reader) and
// distance matrices (io/partial_distances). Format: numpy.lib.format (NEP 1, "A Simple File
// Format for NumPy Arrays"): magic "\x93NUMPY", major and minor version bytes, a
// little-endian header length (uint16 in version 1.0, uint32 in 2.0 and 3.0), then a Python
// dict literal with exactly the keys 'descr', 'fortran_order' and 'shape', padded with spaces
// and ended by '\n'; then exactly the array's bytes.
#pragma once

#include <algorithm>
#include <array>
#include <cstddef>
#include <cstdint>
#include <filesystem>
#include <fstream>
#include <string>
#include <vector>

#include "engine/error.hpp"
#include "engine/stop.hpp"

namespace unfurl::io::detail {

// The header of an NPY file, checked to describe plain numbers.
struct NpyHeader {
  unsigned major = 0, minor = 0;  // format version
  char kind = 0;                  // 'f', 'i', 'u'
  std::size_t item = 0;           // bytes per value
  bool swap = false;              // file byte order differs from this machine's
  bool fortran = false;           // column-major data
  std::vector<std::size_t> shape;
  std::uint64_t data_offset = 0;  // first data byte
  std::string descr;              // as written, e.g. "<f8"
  std::string type_name() const;  // "float64", "uint8", ...
};

// DataError naming `where` for a file that is not NPY ("not an NPY file"), a malformed
// header or an unsupported dtype or version; IoError when the header is cut short.
NpyHeader read_npy_header(std::istream& in, std::uint64_t file_size, const std::string& where);

// An NPY file opened for reading its values: a 1-D array (rows of one column) or a 2-D one.
// DataError for more dimensions, for a file holding more bytes than the array (trailing
// data) and for a shape too large to address; IoError when it holds fewer (truncated).
struct NpyArray {
  std::ifstream in;
  NpyHeader header;
  std::size_t rows = 0, cols = 0;
};
NpyArray open_npy(const std::filesystem::path& file, const std::string& where);

// One stored value, converted to double.
double npy_value(const NpyHeader& h, const unsigned char* bytes);

// Calls put(row, col, value) for every value of rows [begin, end), row - begin counted from
// 0; the values of one row come in increasing column order (C and Fortran order alike).
// Reads in blocks of a few MB, polling `stop`; IoError when a read comes back short.
template <class Put>
void read_npy_rows(NpyArray& a, std::size_t begin, std::size_t end, const StopToken& stop,
                   const std::string& where, Put&& put) {
  const NpyHeader& h = a.header;
  const std::size_t cols = a.cols, count = end - begin;
  // Runs of contiguous file values: the rows (C order) or one column's slice (Fortran).
  const std::size_t run = h.fortran ? count : count * cols;
  const std::size_t runs = h.fortran ? cols : 1;
  std::vector<unsigned char> buffer(std::min<std::size_t>(run * h.item, std::size_t{4} << 20));
  const std::size_t per_read = buffer.size() / h.item;
  for (std::size_t j = 0; j < runs; ++j) {
    const std::uint64_t first =
        h.fortran ? std::uint64_t{j} * a.rows + begin : std::uint64_t{begin} * cols;
    a.in.seekg(static_cast<std::streamoff>(h.data_offset + first * h.item));
    for (std::size_t done = 0; done < run;) {
      stop.check("reading an NPY array");
      const std::size_t n = std::min(per_read, run - done);
      a.in.read(reinterpret_cast<char*>(buffer.data()), static_cast<std::streamsize>(n * h.item));
      if (static_cast<std::size_t>(a.in.gcount()) != n * h.item)
        throw IoError(where + ": read failed part way (truncated file?)");
      for (std::size_t k = 0; k < n; ++k) {
        const std::size_t at = done + k;
        put(h.fortran ? at : at / cols, h.fortran ? j : at % cols,
            npy_value(h, buffer.data() + k * h.item));
      }
      done += n;
    }
  }
}

}  // namespace unfurl::io::detail
