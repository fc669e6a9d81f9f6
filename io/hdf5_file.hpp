// A small layer over the HDF5 C API for the files unfurl writes and reads.
//
// H5Writer creates a file (normally an OutputSet's temporary file, io/atomic_output.hpp) and
// writes whole datasets of float, double, int64 or uint32 with given dimensions, creating the
// groups on the way, plus scalar and vector attributes. close() it before committing.
//
// H5Reader is the one way unfurl opens a file it did not just write (points, inspect, edge
// lists, partial distances, saved graphs, maps). It treats the file as untrusted: a forked
// child walks all metadata first (or has walked it already: H5Walk::done), under a time
// limit (io/detail/hdf5_sandbox.hpp), so that a crash or an endless loop inside the library
// becomes an error; shapes and types are checked before anything is read; a dataset that
// declares more data than the file could hold, or whose storage is missing (unwritten
// chunks, a virtual dataset's missing source, an external raw file or external link to a
// missing file) is refused rather than read as fill values; and conversions that would
// change a value (out of range, a fraction into an integer, NaN into an integer) fail
// instead of clipping. Every failure throws one of the exceptions in
// engine/error.hpp naming the file and the dataset:
//   MissingInputError  the file, a dataset or an attribute does not exist
//   IoError            the file is not HDF5, is corrupt or truncated, or storage it refers
//                      to (another file) is missing
//   DataError          a dataset or attribute has the wrong shape or element type, or its
//                      data was never written
// Paths of datasets and groups are absolute ("/landmarks/rows"); "/" is the root group.
#pragma once

#include <cstddef>
#include <cstdint>
#include <filesystem>
#include <span>
#include <string>
#include <vector>

#include "engine/stop.hpp"
#include "io/detail/hdf5.hpp"

namespace unfurl::io {

// Whether H5Reader walks the file's metadata in a child before opening it.
enum class H5Walk { in_child, done };

// The class of a stored element; readers convert between numeric classes where lossless.
enum class H5Kind { integer, floating, string, other };

struct H5DatasetInfo {
  std::vector<std::size_t> dims;  // empty for a scalar dataset
  H5Kind kind = H5Kind::other;
  std::size_t element_bytes = 0;   // size of one stored element
  std::string type_name;           // "float64", "int32", "string", "compound", ...
  bool plain_numeric = false;      // a type the reader converts (detail::is_plain_numeric_type)
  std::string storage;             // "contiguous", "chunked", "compact", "virtual", "external"
  std::vector<std::size_t> chunk;  // chunk shape when chunked
  std::vector<detail::FilterInfo> filters;  // in pipeline order
  std::size_t elements() const;             // product of dims (1 for a scalar)
};

// A dataset that passed every guard of H5Reader::open_data, ready for H5Dread (whole or by
// hyperslabs of `space`).
struct H5OpenDataset {
  std::string where;  // "file:/path" for messages
  H5DatasetInfo info;
  detail::Hid set, type, space, dcpl;
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

  // Declares a dataset whose bytes the caller puts into the file itself, after close(), at the
  // returned byte offset: product(dims) * sizeof(T) bytes, as stored (little-endian). The
  // storage is contiguous, allocated now and never filled, so the file holds a hole there
  // until then. A dataset of no elements has no storage: returns 0, nothing to put.
  template <class T>
  std::uint64_t reserve(const std::string& dataset, const std::vector<std::size_t>& dims);

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
  // Opens read-only after the isolated metadata walk. MissingInputError when the file does
  // not exist, IoError when it is not a readable HDF5 file or the walk crashed or did not
  // finish in time; InterruptedError when `stop` is requested while waiting for the walk.
  explicit H5Reader(std::filesystem::path path, StopToken stop = {});
  // walk == H5Walk::done: the same without the walk, for a file the caller has walked in a
  // child already (detail::check_hdf5_files_in_child) or that this process wrote, and that
  // it knows to be unchanged since (a work folder piece whose checksum matches its name).
  H5Reader(std::filesystem::path path, StopToken stop, H5Walk walk);
  H5Reader(const H5Reader&) = delete;
  H5Reader& operator=(const H5Reader&) = delete;

  // A group or dataset exists at that path. IoError when a link on the way is an external
  // link to a missing file (or to a file that fails the isolated check).
  bool has(const std::string& object) const;
  bool has_dataset(const std::string& dataset) const;
  bool has_group(const std::string& group) const;

  // Type, shape and storage of a dataset; DataError for a null dataspace.
  H5DatasetInfo info(const std::string& dataset) const;
  // info() plus a check of the number of dimensions (DataError when it differs).
  H5DatasetInfo require_rank(const std::string& dataset, std::size_t rank) const;

  // Opens a numeric dataset for reading after the guards: a plain numeric type, a shape
  // whose byte count does not overflow and that the file (and the files it refers to) could
  // hold, decodable filters, a sane chunk shape, and storage that exists (see the file
  // comment). The one gate before any H5Dread of untrusted data.
  H5OpenDataset open_data(const std::string& dataset) const;

  // Reads a whole numeric dataset converted to T (float, double, std::int64_t,
  // std::uint32_t). Integer T requires integer storage.
  template <class T>
  std::vector<T> read(const std::string& dataset) const;
  // The same into `out`, which must hold exactly the dataset's elements (DataError if not):
  // for large datasets whose place is already allocated, read without a second copy.
  template <class T>
  void read_into(const std::string& dataset, std::span<T> out) const;

  // Every dataset below a group reachable by hard links, each object once (under its first
  // name), as full paths sorted by name; soft and external links are not followed.
  std::vector<std::string> datasets_under(const std::string& group) const;

  // A group or dataset opened for detail-level code (attribute rendering); IoError if it
  // cannot be opened.
  detail::Hid open_object(const std::string& object) const;

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
  template <class T>
  H5OpenDataset open_for(const std::string& dataset) const;    // open_data + checks for T
  H5OpenDataset open_parts(const std::string& dataset) const;  // no guards beyond the header
  detail::Hid open_attribute(const std::string& object, const std::string& name) const;
  std::filesystem::path path_;
  StopToken stop_;
  std::uintmax_t file_bytes_ = 0;
  detail::Hid file_;
};

}  // namespace unfurl::io
