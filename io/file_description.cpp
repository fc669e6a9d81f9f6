#include "io/file_description.hpp"

#include <fstream>

#include "engine/error.hpp"
#include "io/detail/hdf5_attributes.hpp"
#include "io/detail/hdf5_catalog.hpp"
#include "io/detail/point_formats.hpp"
#include "io/points_reader.hpp"

namespace unfurl::io {

namespace {

ArrayDescription describe_dataset(hid_t file, const std::string& path, const std::string& where) {
  ArrayDescription a;
  a.path = path;
  detail::Hid d(H5Dopen2(file, path.c_str(), H5P_DEFAULT));
  if (!d) {
    a.type = "<unreadable>";
    return a;
  }
  detail::Hid type(H5Dget_type(d.get()));
  detail::Hid space(H5Dget_space(d.get()));
  detail::Hid dcpl(H5Dget_create_plist(d.get()));
  if (!type || !space || !dcpl) {
    a.type = "<unreadable>";
    return a;
  }
  a.type = detail::hdf5_type_name(type.get());
  for (hsize_t n : detail::dataspace_dims(space.get(), where + ":" + path)) a.shape.push_back(n);
  switch (H5Pget_layout(dcpl.get())) {
    case H5D_CHUNKED: {
      a.storage = "chunked";
      std::vector<hsize_t> chunk(a.shape.size() > 0 ? a.shape.size() : 1);
      const int rank = H5Pget_chunk(dcpl.get(), static_cast<int>(chunk.size()), chunk.data());
      for (int i = 0; i < rank && i < static_cast<int>(chunk.size()); ++i)
        a.chunk.push_back(chunk[static_cast<std::size_t>(i)]);
      break;
    }
    case H5D_COMPACT:
      a.storage = "compact";
      break;
    case H5D_VIRTUAL:
      a.storage = "virtual";
      break;
    default:
      a.storage = "contiguous";
  }
  for (const auto& f : detail::dataset_filters(dcpl.get()))
    a.filters.push_back(f.available ? f.name : f.name + " (not available)");
  a.attributes = detail::attribute_texts(d.get());
  a.points_candidate = detail::is_plain_numeric_type(type.get()) && a.shape.size() == 2 &&
                       a.shape[0] > 0 && a.shape[1] > 0;
  return a;
}

void describe_hdf5(FileDescription& out) {
  const std::string where = out.file.string();
  detail::Hid f = detail::open_hdf5_read(out.file);
  detail::Hid root(H5Gopen2(f.get(), "/", H5P_DEFAULT));
  if (!root) throw IoError(where + ": root group unreadable (corrupt file)");
  out.root_attributes = detail::attribute_texts(root.get());
  for (const std::string& path : detail::dataset_paths(f.get(), where))
    out.arrays.push_back(describe_dataset(f.get(), path, where));
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

FileDescription describe_file(const std::filesystem::path& file, const std::string& format) {
  FileDescription out;
  out.file = file;
  out.format = detect_point_format(file, format);
  std::error_code ec;
  out.bytes = std::filesystem::file_size(file, ec);
  if (ec) throw MissingInputError(file.string() + ": cannot be read (" + ec.message() + ")");
  if (out.format == "hdf5")
    describe_hdf5(out);
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
