#include "io/detail/hdf5.hpp"

#include <mutex>

namespace unfurl::io::detail {

void quiet_hdf5_errors() {
  static std::once_flag once;
  std::call_once(once, [] { H5Eset_auto2(H5E_DEFAULT, nullptr, nullptr); });
}

}  // namespace unfurl::io::detail
