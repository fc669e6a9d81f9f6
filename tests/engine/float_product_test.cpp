#include "engine/detail/float_product.hpp"

#include <omp.h>

#include <catch2/catch.hpp>
#include <cmath>
#include <cstdlib>
#include <string>
#include <vector>

#include "engine/random.hpp"

using namespace unfurl;

namespace {

std::vector<float> random_block(std::size_t rows, std::size_t depth, std::uint64_t seed) {
  Random rng(seed);
  std::vector<float> v(rows * depth);
  for (float& x : v) x = static_cast<float>(rng.normal());
  return v;
}

}  // namespace

TEST_CASE("block products stay within the float dot-product error bound", "[float_product]") {
  // Oracle: the same sums in long double. Bound: |fl(x.y) - x.y| <= gamma_d |x|.|y| with
  // gamma_d = d u / (1 - d u), u = 2^-24, for any summation order, fused multiply-adds
  // included (Higham, "Accuracy and Stability of Numerical Algorithms", 2nd ed., section 3.1).
  const std::size_t rows = 37, cols = 53;
  for (const std::size_t depth : {1u, 7u, 300u, 784u}) {
    const auto a = random_block(rows, depth, 1 + depth), b = random_block(cols, depth, 2 + depth);
    std::vector<float> c(rows * cols, NAN);
    detail::product_transposed(a.data(), rows, b.data(), cols, depth, c.data());
    const double u = 0x1p-24, gamma = depth * u / (1.0 - depth * u);
    double worst = 0.0;  // largest error as a share of its bound
    for (std::size_t r = 0; r < rows; ++r)
      for (std::size_t j = 0; j < cols; ++j) {
        long double exact = 0, magnitude = 0;
        for (std::size_t t = 0; t < depth; ++t) {
          const long double p = (long double)a[r * depth + t] * b[j * depth + t];
          exact += p;
          magnitude += std::fabs(p);
        }
        const double error = std::fabs((double)(c[r * cols + j] - exact));
        REQUIRE(error <= gamma * (double)magnitude);
        if (magnitude > 0) worst = std::max(worst, error / (gamma * (double)magnitude));
      }
    CHECK(worst > 0.0);  // the products were computed in float, not copied from elsewhere
  }
}

TEST_CASE("block products inside a parallel loop leave the thread count alone", "[float_product]") {
  // OpenBLAS's OpenMP flavour sets OpenMP's thread count when asked to change its own, which
  // would change every later parallel loop of the process (its source, blas_server_omp.c).
  const int threads = omp_get_max_threads();
  const auto a = random_block(64, 100, 3), b = random_block(80, 100, 4);
  std::vector<float> serial(64 * 80), parallel(4 * 64 * 80);
  detail::product_transposed(a.data(), 64, b.data(), 80, 100, serial.data());
#pragma omp parallel for num_threads(2)
  for (int i = 0; i < 4; ++i)
    detail::product_transposed(a.data(), 64, b.data(), 80, 100, parallel.data() + i * 64 * 80);
  CHECK(omp_get_max_threads() == threads);
  for (int i = 0; i < 4; ++i)
    CHECK(std::vector<float>(parallel.begin() + i * 64 * 80,
                             parallel.begin() + (i + 1) * 64 * 80) == serial);
  const std::string name = detail::blas_kernel_name();
  INFO(name);
  CHECK(name.rfind("OpenBLAS ", 0) == 0);
}

TEST_CASE("OpenBLAS runs wide-vector kernels where the processor has them", "[float_product]") {
  // Debian 12's OpenBLAS 0.3.21 gave its baseline SSE kernels ("Prescott") to a processor
  // newer than itself (family 6, model 207, with AVX-512): three times slower scans.
  // Kernel names are OpenBLAS's (driver/others/dynamic.c); skipped when the user forces a set.
  if (std::getenv("OPENBLAS_CORETYPE") != nullptr) {
    WARN("OPENBLAS_CORETYPE is set: the kernel set is the user's choice, not checked");
    return;
  }
  const std::string name = detail::blas_kernel_name();
  INFO(name);
  __builtin_cpu_init();
  if (__builtin_cpu_supports("avx2") && __builtin_cpu_supports("fma"))
    CHECK(name.find("Prescott") == std::string::npos);
  if (__builtin_cpu_supports("avx512f") && __builtin_cpu_supports("avx512bw") &&
      __builtin_cpu_supports("avx512dq") && __builtin_cpu_supports("avx512vl"))
    CHECK((name.find("SkylakeX") != std::string::npos ||
           name.find("Cooperlake") != std::string::npos ||
           name.find("SapphireRapids") != std::string::npos));
}
