#include "engine/detail/float_product.hpp"

#include <cblas.h>

#include <cstdlib>
#include <cstring>
#include <mutex>

#include "engine/error.hpp"

// OpenBLAS's own kernel selection, exported by its run-time dispatching (DYNAMIC_ARCH) builds
// such as Debian's; weak, so that a build without them still links and keeps its kernels.
extern "C" void gotoblas_dynamic_init(void) __attribute__((weak));
extern "C" void gotoblas_dynamic_quit(void) __attribute__((weak));

namespace unfurl::detail {
namespace {

// OpenBLAS 0.3.21 (Debian 12) picks its kernels from the processor's family and model
// numbers. A processor newer than the library (seen: family 6, model 207) is unknown to it and
// gets the baseline SSE kernels ("Prescott"): the Fashion-MNIST scan took 85 s instead of 25 s
// (bench/RESULTS.md, "OpenBLAS on processors it does not know"). When the user has not chosen
// (OPENBLAS_CORETYPE unset) and the library fell back that way, name the kernel set the
// processor's instruction sets allow and let the library select again by its own routine.
// Runs once, before the first product of the process, while no other thread is in OpenBLAS.
void choose_kernels() {
  if (std::getenv("OPENBLAS_CORETYPE") != nullptr) return;  // the user's choice stands
  if (gotoblas_dynamic_init == nullptr || gotoblas_dynamic_quit == nullptr) return;
  if (std::strcmp(openblas_get_corename(), "Prescott") != 0) return;
  __builtin_cpu_init();
  const char* wanted = nullptr;
  if (__builtin_cpu_supports("avx512f") && __builtin_cpu_supports("avx512dq") &&
      __builtin_cpu_supports("avx512bw") && __builtin_cpu_supports("avx512vl") &&
      __builtin_cpu_supports("avx512cd"))
    wanted = "SkylakeX";
  else if (__builtin_cpu_supports("avx2") && __builtin_cpu_supports("fma"))
    wanted = "Haswell";
  if (wanted == nullptr) return;
  setenv("OPENBLAS_CORETYPE", wanted, 0);
  gotoblas_dynamic_quit();
  gotoblas_dynamic_init();
}

// Each caller's product must run on its own thread. Debian ships three flavours of the same
// library (chosen by the system's alternatives at run time, not when this is linked):
// - serial: always one thread.
// - OpenMP: one thread inside an active parallel region, where every caller sits; its
//   openblas_set_num_threads() would also set OpenMP's thread count for the whole process,
//   so it must not be called.
// - pthreads: its own thread pool, shared by all callers; limit it to one thread.
// Also the one place that corrects the kernel choice (choose_kernels).
void prepare_blas() {
  static std::once_flag once;
  std::call_once(once, [] {
    choose_kernels();
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
  prepare_blas();
  const auto m = static_cast<blasint>(rows), n = static_cast<blasint>(cols),
             k = static_cast<blasint>(depth);
  const blasint stride = k > 0 ? k : 1;  // sgemm refuses a leading dimension of 0
  cblas_sgemm(CblasRowMajor, CblasNoTrans, CblasTrans, m, n, k, 1.0f, a, stride, b, stride, 0.0f, c,
              n);
}

std::string blas_kernel_name() {
  prepare_blas();
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
