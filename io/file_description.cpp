#include "io/file_description.hpp"

#include <fstream>

#include "engine/error.hpp"
#include "io/detail/hdf5_attributes.hpp"
#include "io/detail/point_formats.hpp"
#include "io/hdf5_file.hpp"
#include "io/points_reader.hpp"

namespace unfurl::io {

namespace {

ArrayDescription describe_dataset(const H5Reader& in, const std::string& path) {
  ArrayDescription a;
  a.path = path;
  H5DatasetInfo info;
  try {
    info = in.info(path);
    a.attributes = detail::attribute_texts(in.open_object(path).get());
  } catch (const Error&) {
    // Inspect lists what it can; reading the points reports the damage itself.
    a.type = "<unreadable>";
    return a;
  }
  a.type = info.type_name;
  a.shape.assign(info.dims.begin(), info.dims.end());
  a.storage = info.storage;
  a.chunk.assign(info.chunk.begin(), info.chunk.end());
  for (const auto& f : info.filters)
    a.filters.push_back(f.available ? f.name : f.name + " (not available)");
  a.points_candidate =
      info.plain_numeric && a.shape.size() == 2 && a.shape[0] > 0 && a.shape[1] > 0;
  return a;
}

void describe_hdf5(FileDescription& out, const StopToken& stop) {
  const H5Reader in(out.file, stop);
  out.root_attributes = detail::attribute_texts(in.open_object("/").get());
  for (const std::string& path : in.datasets_under("/"))
    out.arrays.push_back(describe_dataset(in, path));
  out.detail = std::to_string(out.arrays.size()) + " dataset(s)";
}

void describe_npy(FileDescription& out) {
  std::ifstream in(out.file, std::ios::binary);
  if (!in) throw MissingInputError(out.file.string() + ": cannot be opened for reading");
  const detail::NpyHeader h = detail::read_npy_header(in, out.bytes, out.file.string());
  ArrayDescription a;
  a.type = h.type_name();
  for (std::size_t n : h.shape) a.shape.push_back(n);
  a.storage = h.fortran ? "Fortran order" : "C order";
  a.points_candidate = (h.shape.size() == 1 || h.shape.size() == 2) && !h.shape.empty() &&
                       h.shape[0] > 0 && (h.shape.size() == 1 || h.shape[1] > 0);
  out.arrays.push_back(a);
  out.detail = "NPY format " + std::to_string(h.major) + "." + std::to_string(h.minor) +
               ", dtype '" + detail::printable(h.descr, 200) + "'";
}

void describe_text(FileDescription& out) {
  const detail::TextLayout t = detail::scan_text_layout(out.file, out.format);
  ArrayDescription a;
  a.type = "text";
  a.shape = {t.data_rows, t.columns};
  a.storage = "lines";
  a.points_candidate = t.data_rows > 0 && t.columns > 0;
  out.arrays.push_back(a);
  // A binary file read as text yields any bytes as "names"; shown as text, they must not
  // reach the terminal raw.
  for (const auto& name : t.column_names) out.column_names.push_back(detail::printable(name, 200));
  const std::string delimiter = t.delimiter == '\t'  ? "tab"
                                : t.delimiter == ' ' ? "spaces or tabs"
                                                     : std::string("'") + t.delimiter + "'";
  out.detail = "fields separated by " + delimiter +
               (t.column_names.empty() ? ", no header" : ", header line");
}

}  // namespace

FileDescription describe_file(const std::filesystem::path& file, const std::string& format,
                              const StopToken& stop) {
  FileDescription out;
  out.file = file;
  out.format = detect_point_format(file, format);
  std::error_code ec;
  out.bytes = std::filesystem::file_size(file, ec);
  if (ec) throw MissingInputError(file.string() + ": cannot be read (" + ec.message() + ")");
  if (out.format == "hdf5")
    describe_hdf5(out, stop);
  else if (out.format == "npy")
    describe_npy(out);
  else
    describe_text(out);
  return out;
}

std::vector<ColumnStats> column_stats(const PointSet& points, const std::vector<double>& centres) {
  std::vector<ColumnStats> stats(points.cols);
  if (points.rows == 0) return stats;
  std::vector<double> sums(points.cols, 0.0);
  auto value = [&](std::size_t i, std::size_t j) {
    return static_cast<double>(points.row(i)[j]) + (centres.empty() ? 0.0 : centres[j]);
  };
  for (std::size_t j = 0; j < points.cols; ++j) stats[j].min = stats[j].max = value(0, j);
  for (std::size_t i = 0; i < points.rows; ++i) {
    for (std::size_t j = 0; j < points.cols; ++j) {
      const double v = value(i, j);
      if (v < stats[j].min) stats[j].min = v;
      if (v > stats[j].max) stats[j].max = v;
      sums[j] += v;
    }
  }
  for (std::size_t j = 0; j < points.cols; ++j)
    stats[j].mean = sums[j] / static_cast<double>(points.rows);
  return stats;
}

}  // namespace unfurl::io
