#include <algorithm>
#include <bit>
#include <cerrno>
#include <cstring>
#include <limits>

#include "engine/error.hpp"
#include "io/detail/hdf5_types.hpp"
#include "io/hdf5_file.hpp"

namespace unfurl::io {
namespace {

using detail::Hid;

// Chunks of about 1 MiB: large enough for the deflate filter to pay, small enough that
// reading a few rows does not inflate the whole dataset.
constexpr std::size_t chunk_bytes = std::size_t{1} << 20;

std::vector<hsize_t> to_hsize(const std::vector<std::size_t>& dims) {
  return std::vector<hsize_t>(dims.begin(), dims.end());
}

Hid make_space(const std::vector<std::size_t>& dims) {
  if (dims.empty()) return Hid(H5Screate(H5S_SCALAR));
  const auto h = to_hsize(dims);
  return Hid(H5Screate_simple(static_cast<int>(h.size()), h.data(), nullptr));
}

// Chunk shape: whole trailing dimensions where they fit, rows of the first dimension filling
// the rest of the budget.
std::vector<hsize_t> chunk_shape(const std::vector<std::size_t>& dims, std::size_t element_bytes) {
  std::vector<hsize_t> chunk(dims.size(), 1);
  std::size_t budget = std::max<std::size_t>(1, chunk_bytes / element_bytes);
  for (std::size_t k = dims.size(); k-- > 0;) {
    const std::size_t take = std::min(dims[k], budget);
    chunk[k] = std::max<std::size_t>(1, take);
    budget = std::max<std::size_t>(1, budget / std::max<std::size_t>(1, take));
  }
  return chunk;
}

Hid link_properties() {
  Hid lcpl(H5Pcreate(H5P_LINK_CREATE));
  if (lcpl) H5Pset_create_intermediate_group(lcpl.get(), 1);
  return lcpl;
}

// The system's cause of a failed library write, when errno holds one a write can have
// ("No space left on device"); HDF5 keeps errno from the failing write(2) but also leaves
// unrelated values behind, so only these are named.
std::string write_cause() {
  const int err = errno;
  for (int known : {ENOSPC, EDQUOT, EFBIG, EIO, EROFS})
    if (err == known) return std::string(": ") + std::strerror(err);
  return "";
}

}  // namespace

std::size_t H5DatasetInfo::elements() const {
  std::size_t n = 1;
  for (std::size_t d : dims) n *= d;
  return n;
}

H5Writer::H5Writer(std::filesystem::path path) : path_(std::move(path)) {
  detail::quiet_hdf5_errors();
  Hid fapl(H5Pcreate(H5P_FILE_ACCESS));
  // Keep locking where the filesystem has it, but do not fail where it has none.
  if (fapl) H5Pset_file_locking(fapl.get(), 1, 1);
  // The 1.10 file format checksums its metadata (superblock, object headers, B-trees), so a
  // damaged file is reported by the library instead of being followed into a crash.
  if (fapl) H5Pset_libver_bounds(fapl.get(), H5F_LIBVER_V110, H5F_LIBVER_V110);
  file_ = Hid(H5Fcreate(path_.c_str(), H5F_ACC_TRUNC, H5P_DEFAULT, fapl.get()));
  if (!file_) throw OutputError(path_.string() + ": cannot create HDF5 file");
}

H5Writer::~H5Writer() {
  file_.reset();
}

std::string H5Writer::where(const std::string& object) const {
  return path_.string() + ": " + object;
}

template <class T>
void H5Writer::write(const std::string& dataset, std::span<const T> values,
                     const std::vector<std::size_t>& dims, H5WriteOptions options) {
  std::size_t expected = 1;
  for (std::size_t d : dims) expected *= d;
  if (expected != values.size())
    throw InternalError(where(dataset) + ": " + std::to_string(values.size()) +
                        " values do not fill the given dimensions");
  if (!file_) throw InternalError(where(dataset) + ": file already closed");
  Hid space = make_space(dims);
  Hid dcpl(H5Pcreate(H5P_DATASET_CREATE));
  if (!space || !dcpl) throw IoError(where(dataset) + ": cannot describe dataset");
  const bool compress = options.gzip_level > 0 && !dims.empty() && expected > 0 &&
                        H5Zfilter_avail(H5Z_FILTER_DEFLATE) > 0;
  if (compress) {
    const auto chunk = chunk_shape(dims, sizeof(T));
    if (H5Pset_chunk(dcpl.get(), static_cast<int>(chunk.size()), chunk.data()) < 0 ||
        H5Pset_shuffle(dcpl.get()) < 0 ||
        H5Pset_deflate(dcpl.get(), static_cast<unsigned>(std::min(options.gzip_level, 9))) < 0)
      throw IoError(where(dataset) + ": cannot set up compression");
  }
  Hid lcpl = link_properties();
  Hid set(H5Dcreate2(file_.get(), dataset.c_str(), detail::H5Type<T>::file(), space.get(),
                     lcpl.get(), dcpl.get(), H5P_DEFAULT));
  if (!set) throw IoError(where(dataset) + ": cannot create dataset");
  errno = 0;
  if (expected > 0 && H5Dwrite(set.get(), detail::H5Type<T>::memory(), H5S_ALL, H5S_ALL,
                               H5P_DEFAULT, values.data()) < 0)
    throw IoError(where(dataset) + ": write failed" + write_cause());
}

template void H5Writer::write<float>(const std::string&, std::span<const float>,
                                     const std::vector<std::size_t>&, H5WriteOptions);
template void H5Writer::write<double>(const std::string&, std::span<const double>,
                                      const std::vector<std::size_t>&, H5WriteOptions);
template void H5Writer::write<std::int64_t>(const std::string&, std::span<const std::int64_t>,
                                            const std::vector<std::size_t>&, H5WriteOptions);
template void H5Writer::write<std::uint32_t>(const std::string&, std::span<const std::uint32_t>,
                                             const std::vector<std::size_t>&, H5WriteOptions);

template <class T>
std::uint64_t H5Writer::reserve(const std::string& dataset, const std::vector<std::size_t>& dims) {
  static_assert(std::endian::native == std::endian::little,
                "the caller's bytes are stored as they are: little-endian, as H5Type::file()");
  if (!file_) throw InternalError(where(dataset) + ": file already closed");
  std::size_t elements = 1;
  for (std::size_t d : dims) elements *= d;
  Hid space = make_space(dims);
  Hid dcpl(H5Pcreate(H5P_DATASET_CREATE));
  if (!space || !dcpl || H5Pset_layout(dcpl.get(), H5D_CONTIGUOUS) < 0 ||
      H5Pset_alloc_time(dcpl.get(), H5D_ALLOC_TIME_EARLY) < 0 ||
      H5Pset_fill_time(dcpl.get(), H5D_FILL_TIME_NEVER) < 0)
    throw IoError(where(dataset) + ": cannot describe dataset");
  Hid lcpl = link_properties();
  Hid set(H5Dcreate2(file_.get(), dataset.c_str(), detail::H5Type<T>::file(), space.get(),
                     lcpl.get(), dcpl.get(), H5P_DEFAULT));
  if (!set) throw IoError(where(dataset) + ": cannot create dataset");
  if (elements == 0) return 0;
  const haddr_t at = H5Dget_offset(set.get());
  if (at == HADDR_UNDEF) throw IoError(where(dataset) + ": no storage was allocated");
  return static_cast<std::uint64_t>(at);
}

template std::uint64_t H5Writer::reserve<float>(const std::string&,
                                                const std::vector<std::size_t>&);
template std::uint64_t H5Writer::reserve<double>(const std::string&,
                                                 const std::vector<std::size_t>&);
template std::uint64_t H5Writer::reserve<std::int64_t>(const std::string&,
                                                       const std::vector<std::size_t>&);
template std::uint64_t H5Writer::reserve<std::uint32_t>(const std::string&,
                                                        const std::vector<std::size_t>&);

void H5Writer::create_group(const std::string& group) {
  if (group == "/") return;
  if (!file_) throw InternalError(where(group) + ": file already closed");
  // Walk the path so that an existing group is accepted and a missing parent created.
  std::string partial;
  std::size_t start = 1;
  while (start <= group.size()) {
    std::size_t end = group.find('/', start);
    if (end == std::string::npos) end = group.size();
    partial = group.substr(0, end);
    if (H5Lexists(file_.get(), partial.c_str(), H5P_DEFAULT) <= 0) {
      Hid g(H5Gcreate2(file_.get(), partial.c_str(), H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT));
      if (!g) throw IoError(where(partial) + ": cannot create group");
    }
    start = end + 1;
  }
}

namespace {

void write_attribute(hid_t file, const std::string& where, const std::string& object,
                     const std::string& name, hid_t file_type, hid_t memory_type, const Hid& space,
                     const void* data) {
  if (H5Aexists_by_name(file, object.c_str(), name.c_str(), H5P_DEFAULT) > 0)
    H5Adelete_by_name(file, object.c_str(), name.c_str(), H5P_DEFAULT);
  Hid attr(H5Acreate_by_name(file, object.c_str(), name.c_str(), file_type, space.get(),
                             H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT));
  if (!attr || H5Awrite(attr.get(), memory_type, data) < 0)
    throw IoError(where + ": cannot write attribute " + name);
}

}  // namespace

void H5Writer::set_string_attribute(const std::string& object, const std::string& name,
                                    const std::string& value) {
  // Variable-length UTF-8: what h5py writes for a Python str, and reads back as one.
  Hid type(H5Tcopy(H5T_C_S1));
  if (!type || H5Tset_size(type.get(), H5T_VARIABLE) < 0 ||
      H5Tset_cset(type.get(), H5T_CSET_UTF8) < 0)
    throw IoError(where(object) + ": cannot describe string attribute " + name);
  const char* text = value.c_str();
  write_attribute(file_.get(), where(object), object, name, type.get(), type.get(),
                  Hid(H5Screate(H5S_SCALAR)), &text);
}

void H5Writer::set_double_attribute(const std::string& object, const std::string& name,
                                    double value) {
  write_attribute(file_.get(), where(object), object, name, H5T_IEEE_F64LE, H5T_NATIVE_DOUBLE,
                  Hid(H5Screate(H5S_SCALAR)), &value);
}

void H5Writer::set_int_attribute(const std::string& object, const std::string& name,
                                 std::int64_t value) {
  write_attribute(file_.get(), where(object), object, name, H5T_STD_I64LE, H5T_NATIVE_INT64,
                  Hid(H5Screate(H5S_SCALAR)), &value);
}

void H5Writer::set_doubles_attribute(const std::string& object, const std::string& name,
                                     std::span<const double> values) {
  write_attribute(file_.get(), where(object), object, name, H5T_IEEE_F64LE, H5T_NATIVE_DOUBLE,
                  make_space({values.size()}), values.data());
}

void H5Writer::set_ints_attribute(const std::string& object, const std::string& name,
                                  std::span<const std::int64_t> values) {
  write_attribute(file_.get(), where(object), object, name, H5T_STD_I64LE, H5T_NATIVE_INT64,
                  make_space({values.size()}), values.data());
}

void H5Writer::close() {
  if (!file_) return;
  const hid_t id = file_.get();
  errno = 0;
  const bool flushed = H5Fflush(id, H5F_SCOPE_GLOBAL) >= 0;
  const std::string cause = write_cause();
  // Close through the library (not just drop a reference) so that a failure is seen here.
  const bool closed = H5Fclose(id) >= 0;
  // After a failed close, closing the id again crashes HDF5 1.10: give it up.
  if (closed)
    file_ = Hid();
  else
    file_.release();
  if (!flushed || !closed)
    throw IoError(path_.string() + ": closing the HDF5 file failed" +
                  (cause.empty() ? write_cause() : cause));
}

}  // namespace unfurl::io
