// NPY point reader over the one NPY reader (io/detail/npy_array.hpp).
#include "engine/error.hpp"
#include "io/detail/point_formats.hpp"

namespace unfurl::io::detail {

void read_npy_points(const std::filesystem::path& file, const PointReadOptions& options,
                     PointReadResult& result) {
  const std::string where = file.string();
  NpyArray a = open_npy(file, where);
  result.source_type = a.header.type_name();
  result.file_rows = a.rows;
  if (a.rows == 0 || a.cols == 0)
    throw DataError(where + ": has " + std::to_string(a.rows) + " rows and " +
                    std::to_string(a.cols) + " columns; points need at least one of each");
  const RowWindow w = resolve_rows(options.rows, a.rows, where);
  result.points = allocate_points(w.size(), a.cols, where);
  PointNarrowing narrowing(result.points, options.centres, where);
  read_npy_rows(a, w.begin, w.end, options.stop, where,
                [&](std::size_t row, std::size_t col, double value) {
                  narrowing.put(row, col, value, w.begin + row);
                });
  narrowing.finish(result);
}

}  // namespace unfurl::io::detail
