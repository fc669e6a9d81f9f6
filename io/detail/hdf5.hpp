// Internal: RAII ownership of HDF5 identifiers, and the library's own error printing turned
// off (every failure becomes one of our exceptions with a one-line message instead).
// HDF5 1.10 (Debian 12) has known crashes on crafted files: treat input files as untrusted,
// check every return value, and read shapes and types before reading data.
#pragma once

#include <hdf5.h>

#include <string>
#include <utility>
#include <vector>

namespace unfurl::io::detail {

// Owns one HDF5 identifier of any kind and closes it with H5Idec_ref.
class Hid {
 public:
  Hid() = default;
  explicit Hid(hid_t id) : id_(id) {}
  ~Hid() { reset(); }
  Hid(Hid&& o) noexcept : id_(std::exchange(o.id_, H5I_INVALID_HID)) {}
  Hid& operator=(Hid&& o) noexcept {
    if (this != &o) {
      reset();
      id_ = std::exchange(o.id_, H5I_INVALID_HID);
    }
    return *this;
  }
  Hid(const Hid&) = delete;
  Hid& operator=(const Hid&) = delete;

  hid_t get() const { return id_; }
  bool valid() const { return id_ >= 0; }
  explicit operator bool() const { return valid(); }
  // Gives the id up without closing it (for an object the library could not close).
  hid_t release() { return std::exchange(id_, H5I_INVALID_HID); }
  void reset() {
    if (id_ >= 0 && H5Iis_valid(id_) > 0) H5Idec_ref(id_);
    id_ = H5I_INVALID_HID;
  }

 private:
  hid_t id_ = H5I_INVALID_HID;
};

// Call once before any HDF5 use (idempotent): silences the library's stderr error stacks.
void quiet_hdf5_errors();

// Absolute paths of every dataset reachable by hard links from `group` ("/" or "/a/b"), each
// object once under its first name, sorted. IoError naming `where` when the listing fails.
std::vector<std::string> visit_datasets(hid_t file, const std::string& group,
                                        const std::string& where);

// "float32", "int16", "uint8", "string", "compound", ...
std::string hdf5_type_name(hid_t type);
// A numeric type HDF5 converts safely: integers of 1, 2, 4 or 8 whole bytes, or the IEEE 754
// half, single or double layout, either byte order. Damaged files can declare other layouts
// (a float of 24,328 bytes), on which HDF5 1.10's conversion writes out of bounds.
bool is_plain_numeric_type(hid_t type);

// Dimensions of a simple dataspace (empty for scalar or null); IoError naming `where` when
// unreadable.
std::vector<hsize_t> dataspace_dims(hid_t space, const std::string& where);

// Filters of a dataset creation property list, by name ("deflate", "shuffle", ...).
struct FilterInfo {
  int id = 0;
  std::string name;
  bool available = false;  // this HDF5 library can decode it
};
std::vector<FilterInfo> dataset_filters(hid_t dcpl);

}  // namespace unfurl::io::detail
