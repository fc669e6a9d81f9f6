#include "engine/detail/float_product.hpp"

#include <cblas.h>

#include <mutex>

#include "engine/error.hpp"

namespace unfurl::detail {
namespace {

// Each caller's product must run on its own thread. Debian ships three flavours of the same
// library (chosen by the system's alternatives at run time, not when this is linked):
// - serial: always one thread.
// - OpenMP: one thread inside an active parallel region, where every caller sits; its
//   openblas_set_num_threads() would also set OpenMP's thread count for the whole process,
//   so it must not be called.
// - pthreads: its own thread pool, shared by all callers; limit it to one thread.
void use_one_thread() {
  static std::once_flag once;
  std::call_once(once, [] {
    if (openblas_get_parallel() == 1) openblas_set_num_threads(1);
  });
}

}  // namespace

void product_transposed(const float* a, std::size_t rows, const float* b, std::size_t cols,
                        std::size_t depth, float* c) {
  if (rows == 0 || cols == 0) return;
  // blasint is 32-bit in Debian's build (USE_64BITINT unset); blocks are far smaller.
  constexpr std::size_t limit = 0x7fffffff;
  if (rows > limit || cols > limit || depth > limit)
    throw InternalError("product_transposed: block larger than the BLAS index type");
  use_one_thread();
  const auto m = static_cast<blasint>(rows), n = static_cast<blasint>(cols),
             k = static_cast<blasint>(depth);
  const blasint stride = k > 0 ? k : 1;  // sgemm refuses a leading dimension of 0
  cblas_sgemm(CblasRowMajor, CblasNoTrans, CblasTrans, m, n, k, 1.0f, a, stride, b, stride, 0.0f, c,
              n);
}

std::string blas_kernel_name() {
  const char* flavour = "unknown threading";
  switch (openblas_get_parallel()) {
    case 0:
      flavour = "serial";
      break;
    case 1:
      flavour = "pthreads";
      break;
    case 2:
      flavour = "OpenMP";
      break;
  }
  return std::string("OpenBLAS ") + openblas_get_corename() + " kernels, " + flavour;
}

}  // namespace unfurl::detail
