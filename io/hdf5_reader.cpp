#include <algorithm>
#include <limits>
#include <system_error>
#include <type_traits>

#include "engine/error.hpp"
#include "io/detail/hdf5_sandbox.hpp"
#include "io/detail/hdf5_types.hpp"
#include "io/hdf5_file.hpp"

namespace unfurl::io {
namespace {

using detail::Hid;

// A crafted file can declare a dataset far larger than itself; refuse to allocate for one
// whose data could not fit even at the best ratio the deflate format can reach (1032:1,
// RFC 1951 length codes), plus slack for small files.
constexpr std::uintmax_t max_inflation = 1032;
constexpr std::uintmax_t slack_bytes = std::uintmax_t{1} << 20;

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

const char* kind_name(H5Kind k) {
  switch (k) {
    case H5Kind::integer:
      return "integer";
    case H5Kind::floating:
      return "floating point";
    case H5Kind::string:
      return "string";
    default:
      return "non-numeric";
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

std::vector<std::size_t> dims_of(hid_t space) {
  const int rank = H5Sget_simple_extent_ndims(space);
  if (rank < 0) return {};
  std::vector<hsize_t> h(static_cast<std::size_t>(rank));
  if (rank > 0) H5Sget_simple_extent_dims(space, h.data(), nullptr);
  return std::vector<std::size_t>(h.begin(), h.end());
}

std::string join_dims(const std::vector<std::size_t>& dims) {
  if (dims.empty()) return "a scalar";
  std::string s;
  for (std::size_t i = 0; i < dims.size(); ++i) s += (i ? " x " : "") + std::to_string(dims[i]);
  return s;
}

}  // namespace

H5Reader::H5Reader(std::filesystem::path path) : path_(std::move(path)) {
  detail::quiet_hdf5_errors();
  std::error_code ec;
  if (!std::filesystem::exists(path_, ec))
    throw MissingInputError(path_.string() + ": file does not exist");
  if (!std::filesystem::is_regular_file(path_, ec))
    throw MissingInputError(path_.string() + ": not a regular file");
  file_bytes_ = std::filesystem::file_size(path_, ec);
  if (ec) throw MissingInputError(path_.string() + ": cannot read file size: " + ec.message());
  detail::check_hdf5_in_child(path_);
  Hid fapl(H5Pcreate(H5P_FILE_ACCESS));
  if (fapl) H5Pset_file_locking(fapl.get(), 1, 1);
  file_ = Hid(H5Fopen(path_.c_str(), H5F_ACC_RDONLY, fapl.get()));
  if (!file_) throw IoError(path_.string() + ": not a readable HDF5 file (corrupt or truncated?)");
}

std::string H5Reader::where(const std::string& object) const {
  return path_.string() + ": " + object;
}

bool H5Reader::has(const std::string& object) const {
  if (object == "/") return true;
  // H5Lexists fails on a missing intermediate group, so test each prefix in turn.
  std::size_t start = 1;
  while (start <= object.size()) {
    std::size_t end = object.find('/', start);
    if (end == std::string::npos) end = object.size();
    if (H5Lexists(file_.get(), object.substr(0, end).c_str(), H5P_DEFAULT) <= 0) return false;
    start = end + 1;
  }
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
  Hid set(H5Dopen2(file_.get(), dataset.c_str(), H5P_DEFAULT));
  if (!set) {
    if (object_type(file_.get(), dataset) == H5I_GROUP)
      throw DataError(where(dataset) + ": is a group, expected a dataset");
    throw IoError(where(dataset) + ": cannot open dataset (corrupt file?)");
  }
  return set;
}

H5DatasetInfo H5Reader::info(const std::string& dataset) const {
  Hid set = open_dataset(dataset);
  Hid type(H5Dget_type(set.get()));
  Hid space(H5Dget_space(set.get()));
  if (!type || !space) throw IoError(where(dataset) + ": cannot read type or shape");
  if (H5Sget_simple_extent_type(space.get()) == H5S_NULL)
    throw DataError(where(dataset) + ": dataset holds no dataspace");
  H5DatasetInfo out;
  out.dims = dims_of(space.get());
  out.kind = kind_of(type.get());
  out.element_bytes = H5Tget_size(type.get());
  return out;
}

H5DatasetInfo H5Reader::require_rank(const std::string& dataset, std::size_t rank) const {
  H5DatasetInfo i = info(dataset);
  if (i.dims.size() != rank)
    throw DataError(where(dataset) + ": expected " + std::to_string(rank) +
                    " dimension(s), found " + join_dims(i.dims));
  return i;
}

template <class T>
std::vector<T> H5Reader::read(const std::string& dataset) const {
  const H5DatasetInfo i = info(dataset);
  constexpr bool integer_target = std::is_integral_v<T>;
  if (i.kind != H5Kind::integer && i.kind != H5Kind::floating)
    throw DataError(where(dataset) + ": holds " + kind_name(i.kind) + " values, expected numbers");
  if (integer_target && i.kind != H5Kind::integer)
    throw DataError(where(dataset) + ": holds floating point values, expected integers");
  // Guard the element count against overflow and against more data than the file holds.
  std::uintmax_t n = 1;
  for (std::size_t d : i.dims) {
    if (d != 0 && n > std::numeric_limits<std::uintmax_t>::max() / d / 16)
      throw IoError(where(dataset) + ": declares an impossible size " + join_dims(i.dims));
    n *= d;
  }
  if (n * i.element_bytes > file_bytes_ * max_inflation + slack_bytes)
    throw IoError(where(dataset) + ": declares " + join_dims(i.dims) +
                  " elements, more than the file can hold (corrupt file?)");
  std::vector<T> out(static_cast<std::size_t>(n));
  if (n == 0) return out;
  Hid set = open_dataset(dataset);
  Hid dxpl(H5Pcreate(H5P_DATASET_XFER));
  ConversionGuard guard{integer_target, false};
  if (!dxpl || H5Pset_type_conv_cb(dxpl.get(), refuse_lossy, &guard) < 0)
    throw IoError(where(dataset) + ": cannot set up reading");
  if (H5Dread(set.get(), detail::H5Type<T>::memory(), H5S_ALL, H5S_ALL, dxpl.get(), out.data()) <
      0) {
    if (guard.refused)
      throw DataError(where(dataset) + ": holds values that do not fit " + detail::H5Type<T>::name);
    throw IoError(where(dataset) + ": read failed (corrupt or truncated file?)");
  }
  return out;
}

template std::vector<float> H5Reader::read<float>(const std::string&) const;
template std::vector<double> H5Reader::read<double>(const std::string&) const;
template std::vector<std::int64_t> H5Reader::read<std::int64_t>(const std::string&) const;
template std::vector<std::uint32_t> H5Reader::read<std::uint32_t>(const std::string&) const;

namespace {
struct VisitState {
  std::string prefix;
  hid_t file;
  std::vector<std::string>* out;
};

herr_t collect_dataset(hid_t, const char* name, const H5L_info_t* info, void* data) {
  auto* s = static_cast<VisitState*>(data);
  if (info->type != H5L_TYPE_HARD) return 0;  // soft and external links are not followed
  const std::string full = s->prefix + name;
  if (object_type(s->file, full) == H5I_DATASET) s->out->push_back(full);
  return 0;
}
}  // namespace

std::vector<std::string> H5Reader::datasets_under(const std::string& group) const {
  std::vector<std::string> out;
  if (!has_group(group)) return out;
  Hid g(H5Gopen2(file_.get(), group.c_str(), H5P_DEFAULT));
  if (!g) throw IoError(where(group) + ": cannot open group");
  VisitState state{group == "/" ? "/" : group + "/", file_.get(), &out};
  if (H5Lvisit(g.get(), H5_INDEX_NAME, H5_ITER_INC, collect_dataset, &state) < 0)
    throw IoError(where(group) + ": cannot list the group (corrupt file?)");
  std::sort(out.begin(), out.end());
  return out;
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
