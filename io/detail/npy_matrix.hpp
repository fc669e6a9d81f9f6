// Internal: a minimal reader of 2-D .npy arrays (format versions 1-3; little-endian float32
// or float64; C order), enough for distance matrices. The general NPY reader for point sets
// lives with the point readers.
#pragma once

#include <cstddef>
#include <filesystem>
#include <vector>

namespace unfurl::io::detail {

struct NpyMatrix {
  std::size_t rows = 0, cols = 0;
  std::vector<float> values;  // rows x cols, row-major; float64 converted (range checked)
};

// MissingInputError when the file is absent, DataError for an unsupported or malformed header
// or a size that disagrees with the header, IoError when reading fails.
NpyMatrix read_npy_matrix(const std::filesystem::path& path);

}  // namespace unfurl::io::detail
