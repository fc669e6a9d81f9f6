#include <algorithm>
#include <limits>
#include <system_error>
#include <type_traits>

#include "engine/error.hpp"
#include "io/detail/hdf5_sandbox.hpp"
#include "io/detail/hdf5_storage.hpp"
#include "io/detail/hdf5_types.hpp"
#include "io/hdf5_file.hpp"

namespace unfurl::io {
namespace {

using detail::Hid;

H5Kind kind_of(hid_t type) {
  switch (H5Tget_class(type)) {
    case H5T_INTEGER:
      return H5Kind::integer;
    case H5T_FLOAT:
      return H5Kind::floating;
    case H5T_STRING:
      return H5Kind::string;
    default:
      return H5Kind::other;
  }
}

struct ConversionGuard {
  bool integer_target = false;
  bool refused = false;
};

// Called by the library for a value the conversion would change: refuse rather than clip.
// NaN and infinities pass into floating-point targets (missing entries are NaN by design).
H5T_conv_ret_t refuse_lossy(H5T_conv_except_t what, hid_t, hid_t, void*, void*, void* data) {
  auto* guard = static_cast<ConversionGuard*>(data);
  const bool special =
      what == H5T_CONV_EXCEPT_PINF || what == H5T_CONV_EXCEPT_NINF || what == H5T_CONV_EXCEPT_NAN;
  if (special && !guard->integer_target) return H5T_CONV_UNHANDLED;
  if (what == H5T_CONV_EXCEPT_PRECISION) return H5T_CONV_UNHANDLED;
  guard->refused = true;
  return H5T_CONV_ABORT;
}

std::string join_dims(const std::vector<std::size_t>& dims) {
  if (dims.empty()) return "a scalar";
  std::string s;
  for (std::size_t i = 0; i < dims.size(); ++i) s += (i ? " x " : "") + std::to_string(dims[i]);
  return s;
}

}  // namespace

H5Reader::H5Reader(std::filesystem::path path, StopToken stop)
    : H5Reader(std::move(path), stop, H5Walk::in_child) {}

H5Reader::H5Reader(std::filesystem::path path, StopToken stop, H5Walk walk)
    : path_(std::move(path)), stop_(stop) {
  detail::quiet_hdf5_errors();
  std::error_code ec;
  if (!std::filesystem::exists(path_, ec))
    throw MissingInputError(path_.string() + ": file does not exist");
  if (!std::filesystem::is_regular_file(path_, ec))
    throw MissingInputError(path_.string() + ": not a regular file");
  file_bytes_ = std::filesystem::file_size(path_, ec);
  if (ec) throw MissingInputError(path_.string() + ": cannot read file size: " + ec.message());
  const htri_t signature = H5Fis_hdf5(path_.c_str());
  if (signature < 0) throw MissingInputError(path_.string() + ": cannot be opened for reading");
  if (signature == 0) throw IoError(path_.string() + ": not an HDF5 file (no HDF5 signature)");
  if (walk == H5Walk::in_child) detail::check_hdf5_in_child(path_, stop_);
  Hid fapl(H5Pcreate(H5P_FILE_ACCESS));
  // Lock when the filesystem supports it, read anyway when it does not.
  if (fapl) H5Pset_file_locking(fapl.get(), 1, 1);
  file_ = Hid(H5Fopen(path_.c_str(), H5F_ACC_RDONLY, fapl.get()));
  if (!file_) throw IoError(path_.string() + ": HDF5 file cannot be opened (truncated or corrupt)");
}

std::string H5Reader::where(const std::string& object) const {
  return path_.string() + ": " + object;
}

bool H5Reader::has(const std::string& object) const {
  if (object == "/") return true;
  if (object.empty() || object.front() != '/') return false;
  // H5Lexists fails on a missing intermediate group, so test each prefix in turn.
  std::size_t start = 1;
  while (start <= object.size()) {
    std::size_t end = object.find('/', start);
    if (end == std::string::npos) end = object.size();
    if (H5Lexists(file_.get(), object.substr(0, end).c_str(), H5P_DEFAULT) <= 0) return false;
    start = end + 1;
  }
  detail::check_external_links(file_.get(), object, path_, stop_);
  return H5Oexists_by_name(file_.get(), object.c_str(), H5P_DEFAULT) > 0;
}

namespace {
H5I_type_t object_type(hid_t file, const std::string& object) {
  Hid o(H5Oopen(file, object.c_str(), H5P_DEFAULT));
  return o ? H5Iget_type(o.get()) : H5I_BADID;
}
}  // namespace

bool H5Reader::has_dataset(const std::string& dataset) const {
  return has(dataset) && object_type(file_.get(), dataset) == H5I_DATASET;
}

bool H5Reader::has_group(const std::string& group) const {
  return has(group) && object_type(file_.get(), group) == H5I_GROUP;
}

Hid H5Reader::open_dataset(const std::string& dataset) const {
  if (!has(dataset)) throw MissingInputError(where(dataset) + ": no such dataset");
  // Relative names of external raw files and virtual sources are looked up beside this file
  // (HDF5's "${ORIGIN}"), as check_storage looks for them, not in the working folder.
  Hid dapl(H5Pcreate(H5P_DATASET_ACCESS));
  if (!dapl || H5Pset_efile_prefix(dapl.get(), "${ORIGIN}") < 0 ||
      H5Pset_virtual_prefix(dapl.get(), "${ORIGIN}") < 0)
    throw IoError(where(dataset) + ": cannot set up dataset access");
  Hid set(H5Dopen2(file_.get(), dataset.c_str(), dapl.get()));
  if (!set) {
    if (object_type(file_.get(), dataset) == H5I_GROUP)
      throw DataError(where(dataset) + ": is a group, expected a dataset");
    throw IoError(where(dataset) + ": cannot open dataset (corrupt file?)");
  }
  return set;
}

H5DatasetInfo H5Reader::info(const std::string& dataset) const {
  return open_parts(dataset).info;
}

H5OpenDataset H5Reader::open_parts(const std::string& dataset) const {
  H5OpenDataset d;
  d.where = where(dataset);
  d.set = open_dataset(dataset);
  d.type = Hid(H5Dget_type(d.set.get()));
  d.space = Hid(H5Dget_space(d.set.get()));
  d.dcpl = Hid(H5Dget_create_plist(d.set.get()));
  if (!d.type || !d.space || !d.dcpl)
    throw IoError(d.where + ": dataset header unreadable (corrupt file)");
  if (H5Sget_simple_extent_type(d.space.get()) == H5S_NULL)
    throw DataError(d.where + ": dataset holds no dataspace");
  H5DatasetInfo& out = d.info;
  for (hsize_t n : detail::dataspace_dims(d.space.get(), d.where))
    out.dims.push_back(static_cast<std::size_t>(n));
  out.kind = kind_of(d.type.get());
  out.element_bytes = H5Tget_size(d.type.get());
  out.type_name = detail::hdf5_type_name(d.type.get());
  out.plain_numeric = detail::is_plain_numeric_type(d.type.get());
  out.filters = detail::dataset_filters(d.dcpl.get());
  switch (H5Pget_layout(d.dcpl.get())) {
    case H5D_CHUNKED: {
      out.storage = "chunked";
      std::vector<hsize_t> chunk(std::max<std::size_t>(1, out.dims.size()));
      const int rank = H5Pget_chunk(d.dcpl.get(), static_cast<int>(chunk.size()), chunk.data());
      for (int i = 0; i < rank && i < static_cast<int>(chunk.size()); ++i)
        out.chunk.push_back(static_cast<std::size_t>(chunk[static_cast<std::size_t>(i)]));
      break;
    }
    case H5D_COMPACT:
      out.storage = "compact";
      break;
    case H5D_VIRTUAL:
      out.storage = "virtual";
      break;
    case H5D_CONTIGUOUS:
      out.storage = H5Pget_external_count(d.dcpl.get()) > 0 ? "external" : "contiguous";
      break;
    default:
      throw IoError(d.where + ": unknown storage layout (corrupt file)");
  }
  return d;
}

H5OpenDataset H5Reader::open_data(const std::string& dataset) const {
  H5OpenDataset d = open_parts(dataset);
  const H5DatasetInfo& i = d.info;
  if (i.kind != H5Kind::integer && i.kind != H5Kind::floating)
    throw DataError(d.where + ": holds " + i.type_name + " values, expected numbers");
  if (!i.plain_numeric)
    throw DataError(d.where + ": stored type " + i.type_name +
                    " is not a whole-byte integer or an IEEE 754 float layout (damaged file?)");
  // Guard the element count against overflow before any size arithmetic.
  std::uintmax_t n = 1;
  for (std::size_t dim : i.dims) {
    if (dim != 0 && n > std::numeric_limits<std::uintmax_t>::max() / dim / 16)
      throw IoError(d.where + ": declares an impossible size " + join_dims(i.dims));
    n *= dim;
  }
  for (const detail::FilterInfo& filter : i.filters)
    if (!filter.available)
      throw DataError(d.where + ": compressed with filter '" + filter.name + "' (id " +
                      std::to_string(filter.id) + ") that this HDF5 library cannot decode");
  detail::check_storage(d, path_, file_bytes_, stop_);
  return d;
}

H5DatasetInfo H5Reader::require_rank(const std::string& dataset, std::size_t rank) const {
  H5DatasetInfo i = info(dataset);
  if (i.dims.size() != rank)
    throw DataError(where(dataset) + ": expected " + std::to_string(rank) +
                    " dimension(s), found " + join_dims(i.dims));
  return i;
}

namespace {
// H5Dread of a whole dataset that passed open_data into `out`, refusing lossy conversions.
template <class T>
void read_open(const H5OpenDataset& d, T* out) {
  Hid dxpl(H5Pcreate(H5P_DATASET_XFER));
  ConversionGuard guard{std::is_integral_v<T>, false};
  if (!dxpl || H5Pset_type_conv_cb(dxpl.get(), refuse_lossy, &guard) < 0)
    throw IoError(d.where + ": cannot set up reading");
  if (H5Dread(d.set.get(), detail::H5Type<T>::memory(), H5S_ALL, H5S_ALL, dxpl.get(), out) < 0) {
    if (guard.refused)
      throw DataError(d.where + ": holds values that do not fit " + detail::H5Type<T>::name);
    throw IoError(d.where + ": read failed (corrupt or truncated file?)");
  }
}
}  // namespace

template <class T>
H5OpenDataset H5Reader::open_for(const std::string& dataset) const {
  constexpr bool integer_target = std::is_integral_v<T>;
  if (integer_target) {
    const H5DatasetInfo i = info(dataset);
    if (i.kind == H5Kind::floating)
      throw DataError(where(dataset) + ": holds floating point values, expected integers");
  }
  H5OpenDataset d = open_data(dataset);
  if (integer_target && d.info.kind != H5Kind::integer)
    throw DataError(d.where + ": holds " + d.info.type_name + " values, expected integers");
  return d;
}

template <class T>
std::vector<T> H5Reader::read(const std::string& dataset) const {
  const H5OpenDataset d = open_for<T>(dataset);
  std::vector<T> out(d.info.elements());
  if (!out.empty()) read_open(d, out.data());
  return out;
}

template <class T>
void H5Reader::read_into(const std::string& dataset, std::span<T> out) const {
  const H5OpenDataset d = open_for<T>(dataset);
  if (out.size() != d.info.elements())
    throw DataError(d.where + ": holds " + std::to_string(d.info.elements()) +
                    " values, expected " + std::to_string(out.size()));
  if (!out.empty()) read_open(d, out.data());
}

template std::vector<float> H5Reader::read<float>(const std::string&) const;
template std::vector<double> H5Reader::read<double>(const std::string&) const;
template std::vector<std::int64_t> H5Reader::read<std::int64_t>(const std::string&) const;
template std::vector<std::uint32_t> H5Reader::read<std::uint32_t>(const std::string&) const;
template void H5Reader::read_into<float>(const std::string&, std::span<float>) const;
template void H5Reader::read_into<double>(const std::string&, std::span<double>) const;
template void H5Reader::read_into<std::int64_t>(const std::string&, std::span<std::int64_t>) const;
template void H5Reader::read_into<std::uint32_t>(const std::string&,
                                                 std::span<std::uint32_t>) const;

std::vector<std::string> H5Reader::datasets_under(const std::string& group) const {
  if (!has_group(group)) return {};
  return detail::visit_datasets(file_.get(), group, path_.string());
}

Hid H5Reader::open_object(const std::string& object) const {
  if (!has(object)) throw MissingInputError(where(object) + ": no such group or dataset");
  Hid o(H5Oopen(file_.get(), object.c_str(), H5P_DEFAULT));
  if (!o) throw IoError(where(object) + ": object header unreadable (corrupt file)");
  return o;
}

namespace {
herr_t collect_name(hid_t, const char* name, const H5A_info_t*, void* data) {
  static_cast<std::vector<std::string>*>(data)->push_back(name);
  return 0;
}
}  // namespace

std::vector<std::string> H5Reader::attribute_names(const std::string& object) const {
  if (!has(object)) throw MissingInputError(where(object) + ": no such group or dataset");
  std::vector<std::string> names;
  hsize_t index = 0;
  if (H5Aiterate_by_name(file_.get(), object.c_str(), H5_INDEX_NAME, H5_ITER_INC, &index,
                         collect_name, &names, H5P_DEFAULT) < 0)
    throw IoError(where(object) + ": cannot list attributes (corrupt file?)");
  std::sort(names.begin(), names.end());
  return names;
}

bool H5Reader::has_attribute(const std::string& object, const std::string& name) const {
  return has(object) &&
         H5Aexists_by_name(file_.get(), object.c_str(), name.c_str(), H5P_DEFAULT) > 0;
}

Hid H5Reader::open_attribute(const std::string& object, const std::string& name) const {
  if (!has_attribute(object, name))
    throw MissingInputError(where(object) + ": no attribute " + name);
  Hid attr(H5Aopen_by_name(file_.get(), object.c_str(), name.c_str(), H5P_DEFAULT, H5P_DEFAULT));
  if (!attr) throw IoError(where(object) + ": cannot open attribute " + name);
  return attr;
}

H5Kind H5Reader::attribute_kind(const std::string& object, const std::string& name) const {
  Hid attr = open_attribute(object, name);
  Hid type(H5Aget_type(attr.get()));
  return type ? kind_of(type.get()) : H5Kind::other;
}

std::size_t H5Reader::attribute_size(const std::string& object, const std::string& name) const {
  Hid attr = open_attribute(object, name);
  Hid space(H5Aget_space(attr.get()));
  const hssize_t n = space ? H5Sget_simple_extent_npoints(space.get()) : -1;
  if (n < 0) throw IoError(where(object) + ": cannot read the shape of attribute " + name);
  return static_cast<std::size_t>(n);
}

std::string H5Reader::string_attribute(const std::string& object, const std::string& name) const {
  Hid attr = open_attribute(object, name);
  Hid type(H5Aget_type(attr.get()));
  if (!type || kind_of(type.get()) != H5Kind::string)
    throw DataError(where(object) + ": attribute " + name + " is not a string");
  if (attribute_size(object, name) != 1)
    throw DataError(where(object) + ": attribute " + name + " is not a single string");
  if (H5Tis_variable_str(type.get()) > 0) {
    Hid memory(H5Tcopy(H5T_C_S1));
    H5Tset_size(memory.get(), H5T_VARIABLE);
    H5Tset_cset(memory.get(), H5Tget_cset(type.get()));
    char* text = nullptr;
    if (H5Aread(attr.get(), memory.get(), &text) < 0 || text == nullptr)
      throw IoError(where(object) + ": cannot read attribute " + name);
    std::string out(text);
    H5free_memory(text);
    return out;
  }
  const std::size_t size = H5Tget_size(type.get());
  if (size == 0 || size > (std::size_t{1} << 24))
    throw DataError(where(object) + ": attribute " + name + " has an unusable string size");
  std::string out(size, '\0');
  if (H5Aread(attr.get(), type.get(), out.data()) < 0)
    throw IoError(where(object) + ": cannot read attribute " + name);
  out.resize(out.find('\0') == std::string::npos ? size : out.find('\0'));
  while (!out.empty() && out.back() == ' ') out.pop_back();  // space-padded strings
  return out;
}

namespace {
template <class T>
std::vector<T> read_numeric_attribute(hid_t attr, std::size_t n, bool integer_target,
                                      const std::string& where, const std::string& name) {
  Hid type(H5Aget_type(attr));
  const H5Kind k = type ? kind_of(type.get()) : H5Kind::other;
  if (k != H5Kind::integer && k != H5Kind::floating)
    throw DataError(where + ": attribute " + name + " is not numeric");
  if (integer_target && k != H5Kind::integer)
    throw DataError(where + ": attribute " + name + " is not an integer");
  std::vector<T> out(n);
  if (n > 0 && H5Aread(attr, detail::H5Type<T>::memory(), out.data()) < 0)
    throw DataError(where + ": attribute " + name + " does not fit " + detail::H5Type<T>::name);
  return out;
}
}  // namespace

double H5Reader::double_attribute(const std::string& object, const std::string& name) const {
  if (attribute_size(object, name) != 1)
    throw DataError(where(object) + ": attribute " + name + " is not a single number");
  return read_numeric_attribute<double>(open_attribute(object, name).get(), 1, false, where(object),
                                        name)[0];
}

std::int64_t H5Reader::int_attribute(const std::string& object, const std::string& name) const {
  if (attribute_size(object, name) != 1)
    throw DataError(where(object) + ": attribute " + name + " is not a single number");
  return read_numeric_attribute<std::int64_t>(open_attribute(object, name).get(), 1, true,
                                              where(object), name)[0];
}

std::vector<double> H5Reader::doubles_attribute(const std::string& object,
                                                const std::string& name) const {
  const std::size_t n = attribute_size(object, name);
  if (n > (std::size_t{1} << 26))
    throw IoError(where(object) + ": attribute " + name + " declares an impossible size");
  return read_numeric_attribute<double>(open_attribute(object, name).get(), n, false, where(object),
                                        name);
}

std::vector<std::int64_t> H5Reader::ints_attribute(const std::string& object,
                                                   const std::string& name) const {
  const std::size_t n = attribute_size(object, name);
  if (n > (std::size_t{1} << 26))
    throw IoError(where(object) + ": attribute " + name + " declares an impossible size");
  return read_numeric_attribute<std::int64_t>(open_attribute(object, name).get(), n, true,
                                              where(object), name);
}

}  // namespace unfurl::io
