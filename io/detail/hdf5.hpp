// Internal: RAII ownership of HDF5 identifiers, and the library's own error printing turned
// off (every failure becomes one of our exceptions with a one-line message instead).
// HDF5 1.10 (Debian 12) has known crashes on crafted files: treat input files as untrusted,
// check every return value, and read shapes and types before reading data.
#pragma once

#include <hdf5.h>

#include <string>
#include <utility>

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

}  // namespace unfurl::io::detail
