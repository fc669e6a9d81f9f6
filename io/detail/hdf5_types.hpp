// Internal: the HDF5 memory and file types of the element types the HDF5 layer stores.
#pragma once

#include <hdf5.h>

#include <cstdint>
#include <type_traits>

namespace unfurl::io::detail {

template <class T>
struct H5Type;

template <>
struct H5Type<float> {
  static hid_t memory() { return H5T_NATIVE_FLOAT; }
  static hid_t file() { return H5T_IEEE_F32LE; }
  static constexpr const char* name = "float32";
};
template <>
struct H5Type<double> {
  static hid_t memory() { return H5T_NATIVE_DOUBLE; }
  static hid_t file() { return H5T_IEEE_F64LE; }
  static constexpr const char* name = "float64";
};
template <>
struct H5Type<std::int64_t> {
  static hid_t memory() { return H5T_NATIVE_INT64; }
  static hid_t file() { return H5T_STD_I64LE; }
  static constexpr const char* name = "int64";
};
template <>
struct H5Type<std::uint32_t> {
  static hid_t memory() { return H5T_NATIVE_UINT32; }
  static hid_t file() { return H5T_STD_U32LE; }
  static constexpr const char* name = "uint32";
};

}  // namespace unfurl::io::detail
