// HDF5 point reader: a 2-D numeric dataset, rows = points, read by blocks of whole chunk rows
// (a hyperslab per block) straight into the PointSet buffer; HDF5 converts every numeric type
// to native float through the memory type.
#include <algorithm>
#include <cmath>
#include <cstring>

#include "engine/error.hpp"
#include "io/detail/hdf5_catalog.hpp"
#include "io/detail/point_formats.hpp"

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

bool link_path_exists(hid_t file, const std::string& path) {
  // H5Lexists fails (rather than returning false) on a missing middle group: test each prefix.
  std::size_t pos = 0;
  while (true) {
    pos = path.find('/', pos + 1);
    const std::string prefix = path.substr(0, pos);
    if (!prefix.empty() && prefix != "/" && H5Lexists(file, prefix.c_str(), H5P_DEFAULT) <= 0)
      return false;
    if (pos == std::string::npos) return true;
  }
}

std::string choose_dataset(hid_t file, const std::string& requested, const std::string& name) {
  if (!requested.empty()) {
    const std::string path = requested.front() == '/' ? requested : "/" + requested;
    if (!link_path_exists(file, path))
      throw MissingInputError(
          name + ": no dataset " + printable(path, 200) +
          " (2-D numeric datasets: " + join_paths(point_dataset_paths(file, name)) + ")");
    H5O_info_t info{};
    if (H5Oget_info_by_name(file, path.c_str(), &info, H5P_DEFAULT) < 0)
      throw IoError(name + ":" + path + ": object header unreadable (corrupt file)");
    if (info.type != H5O_TYPE_DATASET)
      throw MissingInputError(name + ": " + path + " is not a dataset (2-D numeric datasets: " +
                              join_paths(point_dataset_paths(file, name)) + ")");
    return path;
  }
  const auto candidates = point_dataset_paths(file, name);
  const auto empty =
      candidates.empty() ? point_dataset_paths(file, name, true) : std::vector<std::string>{};
  if (empty.size() == 1) return empty.front();  // its shape check reports the empty data
  if (!empty.empty())
    throw DataError(name + ": every 2-D numeric dataset is empty (" + join_paths(empty) + ")");
  if (candidates.empty())
    throw MissingInputError(name + ": holds no 2-D numeric dataset (datasets: " +
                            join_paths(dataset_paths(file, name)) + ")");
  if (candidates.size() > 1)
    throw OptionError("--dataset: " + name + " holds " + std::to_string(candidates.size()) +
                      " 2-D numeric datasets (" + join_paths(candidates) + "); name one");
  return candidates.front();
}

// The chunk shape, checked as HDF5 checks it when it creates a dataset (every chunk dimension
// positive and within a fixed maximum dimension, a chunk under 4 GiB): a damaged file can
// declare any chunk shape, and HDF5 1.10 reads past its buffers on some of them.
hsize_t checked_chunk_rows(hid_t space, hid_t dcpl, hid_t type, const std::string& where) {
  hsize_t dims[2] = {0, 0}, maxdims[2] = {0, 0}, chunk[2] = {0, 0};
  const bool ok =
      H5Sget_simple_extent_dims(space, dims, maxdims) == 2 && H5Pget_chunk(dcpl, 2, chunk) == 2;
  double bytes = static_cast<double>(H5Tget_size(type));
  bool fits = ok;
  for (int i = 0; i < 2 && fits; ++i) {
    fits = chunk[i] > 0 && maxdims[i] >= dims[i] &&
           (maxdims[i] == H5S_UNLIMITED || chunk[i] <= maxdims[i]);
    bytes *= static_cast<double>(chunk[i]);
  }
  if (!fits || bytes >= 4294967296.0)
    throw IoError(where + ": chunk shape " + std::to_string(chunk[0]) + " x " +
                  std::to_string(chunk[1]) + " does not fit the dataset (corrupt file)");
  return chunk[0];
}

}  // namespace

void read_hdf5_points(const std::filesystem::path& file, const PointReadOptions& options,
                      PointReadResult& result) {
  const std::string name = file.string();
  Hid f = open_hdf5_read(file);
  result.dataset = choose_dataset(f.get(), options.dataset, name);
  const std::string where = name + ":" + result.dataset;

  Hid d(H5Dopen2(f.get(), result.dataset.c_str(), H5P_DEFAULT));
  if (!d) throw IoError(where + ": dataset cannot be opened (corrupt file)");
  Hid type(H5Dget_type(d.get()));
  Hid space(H5Dget_space(d.get()));
  Hid dcpl(H5Dget_create_plist(d.get()));
  if (!type || !space || !dcpl) throw IoError(where + ": dataset header unreadable (corrupt file)");
  result.source_type = hdf5_type_name(type.get());
  if (!is_numeric_type(type.get()))
    throw DataError(where + ": holds " + result.source_type + " values; points need numbers");
  if (!is_plain_numeric_type(type.get()))
    throw DataError(where + ": stored type " + result.source_type +
                    " is not a whole-byte integer or an IEEE 754 float layout (damaged file?)");
  const auto dims = dataspace_dims(space.get(), where);
  if (dims.size() != 2)
    throw DataError(where + ": is " + std::to_string(dims.size()) +
                    "-D; points need a 2-D dataset (rows x columns)");
  bool bounded_ratio = true;  // only deflate, shuffle and checksums: see below
  for (const FilterInfo& filter : dataset_filters(dcpl.get())) {
    if (!filter.available)
      throw DataError(where + ": compressed with filter '" + filter.name + "' (id " +
                      std::to_string(filter.id) + ") that this HDF5 library cannot decode");
    bounded_ratio =
        bounded_ratio && (filter.id == H5Z_FILTER_DEFLATE || filter.id == H5Z_FILTER_SHUFFLE ||
                          filter.id == H5Z_FILTER_FLETCHER32);
  }

  result.file_rows = static_cast<std::size_t>(dims[0]);
  const auto cols = static_cast<std::size_t>(dims[1]);
  if (result.file_rows == 0 || cols == 0)
    throw DataError(where + ": has " + std::to_string(dims[0]) + " rows and " +
                    std::to_string(dims[1]) + " columns; points need at least one of each");
  // A damaged header can claim any shape. Contiguous data must all be stored in the file;
  // chunked data at least 1/1100 of it: deflate compresses by at most 1032:1 (zlib's
  // documented limit, from memory), and a dataset whose chunks were mostly never written
  // holds fill values, not points. Other filters (scale-offset, szip, ...) have no such
  // bound; there only the memory check of allocate_points guards.
  const double claimed = static_cast<double>(dims[0]) * static_cast<double>(dims[1]) *
                         static_cast<double>(H5Tget_size(type.get()));
  const auto stored = static_cast<double>(H5Dget_storage_size(d.get()));
  const H5D_layout_t layout = H5Pget_layout(dcpl.get());
  const double least = layout == H5D_CONTIGUOUS                 ? claimed
                       : layout == H5D_CHUNKED && bounded_ratio ? claimed / 1100.0
                                                                : 0.0;
  if (stored < least && !(layout == H5D_CONTIGUOUS && stored == 0))
    throw IoError(where + ": shape " + std::to_string(dims[0]) + " x " + std::to_string(dims[1]) +
                  " needs more data than the file stores (" +
                  std::to_string(static_cast<std::uint64_t>(stored)) +
                  " bytes; corrupt file, or chunks never written)");
  const RowWindow w = resolve_rows(options.rows, result.file_rows, where);
  result.points = allocate_points(w.size(), cols, where);

  // Blocks end on chunk-row boundaries so that every chunk is decoded once.
  hsize_t chunk_rows = 1;
  if (H5Pget_layout(dcpl.get()) == H5D_CHUNKED)
    chunk_rows = checked_chunk_rows(space.get(), dcpl.get(), type.get(), where);
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
