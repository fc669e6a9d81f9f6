// Test fixtures for the point readers: a temporary folder, HDF5 datasets written through the
// C API, NPY files written byte by byte, and raw file bytes.
#pragma once

#include <hdf5.h>

#include <cstdint>
#include <exception>
#include <filesystem>
#include <string>
#include <type_traits>
#include <vector>

#if defined(__SANITIZE_ADDRESS__)
#include <sanitizer/lsan_interface.h>
#endif

namespace unfurl::test {

// HDF5 1.10 leaks a few hundred bytes on some error paths when it opens damaged files (the
// blocks are allocated inside libhdf5, seen after a failed H5Fopen). Leak checking pauses
// while such files are read, so that leaks of our own code still fail every other test.
// HDF5 recycles blocks through its own free lists, so they are emptied on both sides of the
// pause: a block allocated outside it must not be lost inside it.
class LeakCheckPause {
 public:
#if defined(__SANITIZE_ADDRESS__)
  LeakCheckPause() {
    H5garbage_collect();
    __lsan_disable();
  }
  ~LeakCheckPause() {
    H5garbage_collect();
    __lsan_enable();
  }
#else
  LeakCheckPause() = default;
#endif
  LeakCheckPause(const LeakCheckPause&) = delete;
  LeakCheckPause& operator=(const LeakCheckPause&) = delete;
};

// A fresh folder under the system temporary folder, removed with everything in it.
class TempDir {
 public:
  TempDir();
  ~TempDir();
  TempDir(const TempDir&) = delete;
  TempDir& operator=(const TempDir&) = delete;
  std::filesystem::path operator/(const std::string& name) const { return path_ / name; }
  const std::filesystem::path& path() const { return path_; }

 private:
  std::filesystem::path path_;
};

template <class T>
hid_t native_type() {
  if constexpr (std::is_same_v<T, float>) return H5T_NATIVE_FLOAT;
  if constexpr (std::is_same_v<T, double>) return H5T_NATIVE_DOUBLE;
  if constexpr (std::is_same_v<T, std::int8_t>) return H5T_NATIVE_INT8;
  if constexpr (std::is_same_v<T, std::int16_t>) return H5T_NATIVE_INT16;
  if constexpr (std::is_same_v<T, std::int32_t>) return H5T_NATIVE_INT32;
  if constexpr (std::is_same_v<T, std::int64_t>) return H5T_NATIVE_INT64;
  if constexpr (std::is_same_v<T, std::uint8_t>) return H5T_NATIVE_UINT8;
  if constexpr (std::is_same_v<T, std::uint16_t>) return H5T_NATIVE_UINT16;
  if constexpr (std::is_same_v<T, std::uint32_t>) return H5T_NATIVE_UINT32;
  if constexpr (std::is_same_v<T, std::uint64_t>) return H5T_NATIVE_UINT64;
}

struct Hdf5Layout {
  bool chunked = false;
  hsize_t chunk_rows = 0;  // chunks span every column
  int gzip_level = 0;      // 0: no compression
};

// Adds `dataset` (intermediate groups created) to `file`, creating the file if absent.
// `data` holds the product of `dims` values of `mem_type`.
void write_hdf5(const std::filesystem::path& file, const std::string& dataset,
                const std::vector<hsize_t>& dims, hid_t file_type, hid_t mem_type, const void* data,
                const Hdf5Layout& layout = {});
void write_string_dataset(const std::filesystem::path& file, const std::string& dataset);
void write_compound_dataset(const std::filesystem::path& file, const std::string& dataset);
void write_hdf5_attribute(const std::filesystem::path& file, const std::string& object,
                          const std::string& name, const std::string& text);

// An NPY file (numpy.lib.format, NEP 1): `descr` such as "<f4", `data` already in the file's
// byte order and element order.
void write_npy(const std::filesystem::path& file, const std::string& descr,
               const std::vector<std::size_t>& shape, bool fortran_order, const std::string& data,
               int major_version = 1);

// The message of the exception of kind E that `body` throws; a marker that no matcher expects
// when it throws nothing or another kind (so a check on the message fails).
template <class E, class F>
std::string thrown_message(F&& body) {
  try {
    body();
  } catch (const E& e) {
    return e.what();
  } catch (const std::exception& e) {
    return std::string("<another exception kind: ") + e.what() + ">";
  }
  return "<no exception>";
}
#define CHECK_THROWS_KIND(expr, Kind, matcher) \
  CHECK_THAT(::unfurl::test::thrown_message<Kind>([&] { (void)(expr); }), matcher)

std::string read_bytes(const std::filesystem::path& file);
void write_bytes(const std::filesystem::path& file, const std::string& bytes);

}  // namespace unfurl::test
