#include "io/detail/hdf5.hpp"

#include <mutex>

namespace unfurl::io::detail {

void quiet_hdf5_errors() {
  static std::once_flag once;
  std::call_once(once, [] {
    // No library shutdown at exit: it would close again a file whose close already failed
    // (disk full), and HDF5 1.10 crashes doing so. unfurl closes every file it opens itself.
    H5dont_atexit();
    H5Eset_auto2(H5E_DEFAULT, nullptr, nullptr);
  });
}

}  // namespace unfurl::io::detail
