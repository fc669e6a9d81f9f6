// A small layer over the HDF5 C API for the files unfurl writes and reads.
//
// H5Writer creates a file (normally an OutputSet's temporary file, io/atomic_output.hpp) and
// writes whole datasets of float, double, int64 or uint32 with given dimensions, creating the
// groups on the way, plus scalar and vector attributes. close() it before committing.
//
// H5Reader opens a file read-only and treats it as untrusted: shapes and types are checked
// before anything is read, a dataset that declares more data than the file could hold is
// refused, and conversions that would change a value (out of range, a fraction into an
// integer, NaN into an integer) fail instead of clipping. Every failure throws one of the
// exceptions in engine/error.hpp naming the file and the dataset:
//   MissingInputError  the file, a dataset or an attribute does not exist
//   IoError            the file is not HDF5, or is corrupt or truncated
//   DataError          a dataset or attribute has the wrong shape or element type
// Paths of datasets and groups are absolute ("/landmarks/rows"); "/" is the root group.
#pragma once

#include <cstddef>
#include <cstdint>
#include <filesystem>
#include <span>
#include <string>
#include <vector>

#include "io/detail/hdf5.hpp"

namespace unfurl::io {

// The class of a stored element; readers convert between numeric classes where lossless.
enum class H5Kind { integer, floating, string, other };

struct H5DatasetInfo {
  std::vector<std::size_t> dims;  // empty for a scalar dataset
  H5Kind kind = H5Kind::other;
  std::size_t element_bytes = 0;  // size of one stored element
  std::size_t elements() const;   // product of dims (1 for a scalar)
};

struct H5WriteOptions {
  int gzip_level = 0;  // 0: contiguous, uncompressed; 1..9: chunked, shuffled and deflated
};

class H5Writer {
 public:
  // Creates (or truncates) the file. Throws OutputError when it cannot be created.
  explicit H5Writer(std::filesystem::path path);
  ~H5Writer();  // closes without throwing if close() was not called
  H5Writer(const H5Writer&) = delete;
  H5Writer& operator=(const H5Writer&) = delete;

  // Writes a dataset of values.size() == product(dims) elements (dims empty: a scalar).
  // T is float, double, std::int64_t or std::uint32_t. Throws IoError on failure and
  // InternalError when the sizes disagree.
  template <class T>
  void write(const std::string& dataset, std::span<const T> values,
             const std::vector<std::size_t>& dims, H5WriteOptions options = {});
  template <class T>
  void write(const std::string& dataset, const std::vector<T>& values,
             const std::vector<std::size_t>& dims, H5WriteOptions options = {}) {
    write(dataset, std::span<const T>(values), dims, options);
  }

  void create_group(const std::string& group);  // parents too; an existing group is fine

  // Attributes on an existing group or dataset; an attribute of the same name is replaced.
  void set_string_attribute(const std::string& object, const std::string& name,
                            const std::string& value);
  void set_double_attribute(const std::string& object, const std::string& name, double value);
  void set_int_attribute(const std::string& object, const std::string& name, std::int64_t value);
  void set_doubles_attribute(const std::string& object, const std::string& name,
                             std::span<const double> values);
  void set_ints_attribute(const std::string& object, const std::string& name,
                          std::span<const std::int64_t> values);

  // Flushes and closes the file. Throws IoError when the library reports a failure.
  void close();
  const std::filesystem::path& path() const { return path_; }

 private:
  std::string where(const std::string& object) const;
  std::filesystem::path path_;
  detail::Hid file_;
};

class H5Reader {
 public:
  // Opens read-only. MissingInputError when the file does not exist, IoError when it is not
  // a readable HDF5 file.
  explicit H5Reader(std::filesystem::path path);
  H5Reader(const H5Reader&) = delete;
  H5Reader& operator=(const H5Reader&) = delete;

  bool has(const std::string& object) const;  // a group or dataset exists at that path
  bool has_dataset(const std::string& dataset) const;
  bool has_group(const std::string& group) const;

  H5DatasetInfo info(const std::string& dataset) const;
  // info() plus a check of the number of dimensions (DataError when it differs).
  H5DatasetInfo require_rank(const std::string& dataset, std::size_t rank) const;

  // Reads a whole numeric dataset converted to T (float, double, std::int64_t,
  // std::uint32_t). Integer T requires integer storage.
  template <class T>
  std::vector<T> read(const std::string& dataset) const;

  // Every dataset below a group, recursively, as full paths sorted by name.
  std::vector<std::string> datasets_under(const std::string& group) const;

  std::vector<std::string> attribute_names(const std::string& object) const;  // sorted
  bool has_attribute(const std::string& object, const std::string& name) const;
  // Kind and element count (1 for a scalar) of an attribute.
  H5Kind attribute_kind(const std::string& object, const std::string& name) const;
  std::size_t attribute_size(const std::string& object, const std::string& name) const;
  std::string string_attribute(const std::string& object, const std::string& name) const;
  double double_attribute(const std::string& object, const std::string& name) const;
  std::int64_t int_attribute(const std::string& object, const std::string& name) const;
  std::vector<double> doubles_attribute(const std::string& object, const std::string& name) const;
  std::vector<std::int64_t> ints_attribute(const std::string& object,
                                           const std::string& name) const;

  const std::filesystem::path& path() const { return path_; }

 private:
  std::string where(const std::string& object) const;
  detail::Hid open_dataset(const std::string& dataset) const;
  detail::Hid open_attribute(const std::string& object, const std::string& name) const;
  std::filesystem::path path_;
  std::uintmax_t file_bytes_ = 0;
  detail::Hid file_;
};

}  // namespace unfurl::io
