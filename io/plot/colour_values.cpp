#include "io/plot/colour_values.hpp"

#include <fmt/core.h>

#include <algorithm>
#include <cmath>
#include <optional>

#include "engine/error.hpp"
#include "io/hdf5_file.hpp"
#include "io/points_reader.hpp"

namespace unfurl::io::plot {

PointColours read_colour_values(const ColourSource& source, const std::vector<std::int64_t>& rows) {
  std::vector<double> by_row;
  std::string what;
  std::optional<H5Reader> h5;
  if (!source.dataset.empty() && detect_point_format(source.file) == "hdf5")
    h5.emplace(source.file);
  if (h5 && h5->info(source.dataset).dims.size() == 1) {
    by_row = h5->read<double>(source.dataset);
    what = source.file.filename().string() + ":" + source.dataset;
  } else {
    PointReadOptions o;
    o.dataset = source.dataset;
    const PointReadResult r = read_points(source.file, o);
    if (source.column >= r.points.cols)
      throw DataError(fmt::format("{}: column {} asked, the file has {} columns (0-based)",
                                  source.file.string(), source.column, r.points.cols));
    by_row.assign(r.file_rows, NAN);
    for (std::size_t i = 0; i < r.points.rows; ++i) {
      double v = double(r.points.row(i)[source.column]) + r.centres[source.column];
      // The reader narrows centred values to float32: a whole-number label comes back a few
      // float32 steps off and is put back on its number, so labels stay categories.
      if (std::abs(v - std::round(v)) <= 1e-5 * std::max(1.0, std::abs(v))) v = std::round(v) + 0.0;
      by_row[static_cast<std::size_t>(r.rows[i])] = v;
    }
    what = r.column_names.size() > source.column
               ? r.column_names[source.column]
               : fmt::format("column {} of {}", source.column, source.file.filename().string());
  }
  PointColours out;
  out.label = what;
  out.values.reserve(rows.size());
  for (std::int64_t r : rows) {
    if (r < 0 || static_cast<std::size_t>(r) >= by_row.size())
      throw DataError(fmt::format("{}: holds {} rows, the map has input row {}",
                                  source.file.string(), by_row.size(), r));
    out.values.push_back(by_row[static_cast<std::size_t>(r)]);
  }
  return out;
}

}  // namespace unfurl::io::plot
