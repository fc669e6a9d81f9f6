// HDF5 point reader: a 2-D numeric dataset, rows = points, opened through io::H5Reader (the
// one guarded HDF5 path) and read by blocks of whole chunk rows (a hyperslab per block)
// straight into the PointSet buffer; HDF5 converts every numeric type to native float
// through the memory type.
#include <algorithm>
#include <cmath>
#include <cstring>

#include "engine/error.hpp"
#include "io/detail/point_formats.hpp"
#include "io/hdf5_file.hpp"

namespace unfurl::io::detail {

namespace {

constexpr std::size_t kBlockBytes = std::size_t{8} << 20;  // common practice, no source

struct Conversion {
  bool out_of_range = false;
};

// Finite values beyond the float32 range must not be silently turned into inf. HDF5 reports
// them as RANGE_HI/LOW; a true infinity in a float64 source shows up the same way through the
// native conversion, so look at the source value (native byte order at this point).
H5T_conv_ret_t on_conversion_exception(H5T_conv_except_t kind, hid_t src, hid_t, void* src_buf,
                                       void*, void* data) {
  if (kind != H5T_CONV_EXCEPT_RANGE_HI && kind != H5T_CONV_EXCEPT_RANGE_LOW)
    return H5T_CONV_UNHANDLED;
  if (H5Tget_class(src) == H5T_FLOAT && H5Tget_size(src) == sizeof(double) && src_buf) {
    double v = 0;
    std::memcpy(&v, src_buf, sizeof v);
    if (std::isinf(v)) return H5T_CONV_UNHANDLED;
  }
  static_cast<Conversion*>(data)->out_of_range = true;
  return H5T_CONV_ABORT;
}

// "/a, /b" or "none" for messages.
std::string join_paths(const std::vector<std::string>& paths) {
  if (paths.empty()) return "none";
  std::string out;
  for (const auto& p : paths) out += (out.empty() ? "" : ", ") + printable(p, 200);
  return out;
}

// Datasets that can be points: 2-D, plain numeric, at least one row and column. With
// include_empty, also 2-D numeric datasets with no rows or no columns (so that a file whose
// only points are empty is reported as empty data, not as a file without points).
std::vector<std::string> point_dataset_paths(const H5Reader& in, bool include_empty = false) {
  std::vector<std::string> found;
  for (const std::string& path : in.datasets_under("/")) {
    try {
      const H5DatasetInfo i = in.info(path);
      if (i.plain_numeric && i.dims.size() == 2 &&
          (include_empty || (i.dims[0] > 0 && i.dims[1] > 0)))
        found.push_back(path);
    } catch (const Error&) {
      // A damaged dataset is no candidate; naming it explicitly reports the damage.
    }
  }
  return found;
}

std::string choose_dataset(const H5Reader& in, const std::string& requested,
                           const std::string& name) {
  if (!requested.empty()) {
    const std::string path = requested.front() == '/' ? requested : "/" + requested;
    if (!in.has(path))
      throw MissingInputError(name + ": no dataset " + printable(path, 200) +
                              " (2-D numeric datasets: " + join_paths(point_dataset_paths(in)) +
                              ")");
    if (!in.has_dataset(path))
      throw MissingInputError(
          name + ": " + printable(path, 200) +
          " is not a dataset (2-D numeric datasets: " + join_paths(point_dataset_paths(in)) + ")");
    return path;
  }
  const auto candidates = point_dataset_paths(in);
  const auto empty =
      candidates.empty() ? point_dataset_paths(in, true) : std::vector<std::string>{};
  if (empty.size() == 1) return empty.front();  // its shape check reports the empty data
  if (!empty.empty())
    throw DataError(name + ": every 2-D numeric dataset is empty (" + join_paths(empty) + ")");
  if (candidates.empty())
    throw MissingInputError(name + ": holds no 2-D numeric dataset (datasets: " +
                            join_paths(in.datasets_under("/")) + ")");
  if (candidates.size() > 1)
    throw OptionError("PointReadOptions.dataset",
                      name + " holds " + std::to_string(candidates.size()) +
                          " 2-D numeric datasets (" + join_paths(candidates) + "); name one");
  return candidates.front();
}

}  // namespace

void read_hdf5_points(const std::filesystem::path& file, const PointReadOptions& options,
                      PointReadResult& result) {
  const std::string name = file.string();
  const H5Reader in(file, options.stop);
  result.dataset = choose_dataset(in, options.dataset, name);
  const std::string where = name + ":" + result.dataset;
  // Shape first, so that an empty or 3-D dataset is reported as such; then every guard of
  // the one HDF5 reader (type, declared size, filters, missing storage).
  const H5DatasetInfo info = in.info(result.dataset);
  result.source_type = info.type_name;
  if (info.kind != H5Kind::integer && info.kind != H5Kind::floating)
    throw DataError(where + ": holds " + result.source_type + " values; points need numbers");
  const auto& dims = info.dims;
  if (dims.size() != 2)
    throw DataError(where + ": is " + std::to_string(dims.size()) +
                    "-D; points need a 2-D dataset (rows x columns)");
  result.file_rows = dims[0];
  const std::size_t cols = dims[1];
  if (result.file_rows == 0 || cols == 0)
    throw DataError(where + ": has " + std::to_string(dims[0]) + " rows and " +
                    std::to_string(dims[1]) + " columns; points need at least one of each");
  const H5OpenDataset data = in.open_data(result.dataset);
  const Hid& d = data.set;
  const Hid& space = data.space;
  const RowWindow w = resolve_rows(options.rows, result.file_rows, where);
  result.points = allocate_points(w.size(), cols, where);

  // Blocks end on chunk-row boundaries so that every chunk is decoded once.
  const hsize_t chunk_rows = data.info.chunk.empty() ? 1 : data.info.chunk.front();
  const auto row_bytes = static_cast<hsize_t>(cols * sizeof(float));
  hsize_t block = std::max<hsize_t>(1, kBlockBytes / row_bytes);
  block = std::max<hsize_t>(chunk_rows, block / chunk_rows * chunk_rows);

  Conversion conversion;
  Hid dxpl(H5Pcreate(H5P_DATASET_XFER));
  if (!dxpl || H5Pset_type_conv_cb(dxpl.get(), on_conversion_exception, &conversion) < 0)
    throw IoError(where + ": cannot set up the HDF5 transfer");

  // Read in double so that the shared narrowing step centres before rounding to float32.
  PointNarrowing narrowing(result.points, options.centres, where);
  std::vector<double> values;
  for (hsize_t r = w.begin; r < w.end;) {
    options.stop.check("reading points");
    const hsize_t stop = std::min<hsize_t>(w.end, (r / block + 1) * block);
    const hsize_t start[2] = {r, 0};
    const hsize_t count[2] = {stop - r, cols};
    Hid mem(H5Screate_simple(2, count, nullptr));
    if (!mem ||
        H5Sselect_hyperslab(space.get(), H5S_SELECT_SET, start, nullptr, count, nullptr) < 0)
      throw IoError(where + ": cannot select rows " + std::to_string(r) + ":" +
                    std::to_string(stop));
    values.resize(static_cast<std::size_t>(count[0]) * cols);
    if (H5Dread(d.get(), H5T_NATIVE_DOUBLE, mem.get(), space.get(), dxpl.get(), values.data()) <
        0) {
      if (conversion.out_of_range)
        throw DataError(where + ": rows " + std::to_string(r) + ":" + std::to_string(stop) +
                        " hold a value outside the float32 range");
      throw IoError(where + ": reading rows " + std::to_string(r) + ":" + std::to_string(stop) +
                    " failed (truncated or corrupt file)");
    }
    for (std::size_t i = 0; i < count[0]; ++i)
      for (std::size_t j = 0; j < cols; ++j)
        narrowing.put(r - w.begin + i, j, values[i * cols + j], r + i);
    r = stop;
  }
  narrowing.finish(result);
}

}  // namespace unfurl::io::detail
