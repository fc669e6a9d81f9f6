// Float32 block products for the blocked neighbour scan, by OpenBLAS. Debian builds OpenBLAS
// with DYNAMIC_ARCH: it picks the kernels for the processor it runs on (AVX-512, AVX2 or
// baseline SSE2), so one portable binary gets the wide vectors. Internal to the engine.
#pragma once

#include <cstddef>
#include <string>

namespace unfurl::detail {

// c[r * cols + j] = sum_t a[r * depth + t] * b[j * depth + t] for r < rows, j < cols: the
// products of the row-major blocks a (rows x depth) and b (cols x depth), on the calling
// thread only (callers run it inside their own parallel loops). The summation order is the
// kernel's, so the bits may differ between processors; callers rely only on the bound
// |fl(x.y) - x.y| <= gamma_depth |x| |y|, which holds for any order.
void product_transposed(const float* a, std::size_t rows, const float* b, std::size_t cols,
                        std::size_t depth, float* c);

// What OpenBLAS runs here: its kernel set for this processor (such as "Haswell" or
// "SkylakeX") and its threading flavour ("serial", "pthreads" or "OpenMP").
std::string blas_kernel_name();

}  // namespace unfurl::detail
