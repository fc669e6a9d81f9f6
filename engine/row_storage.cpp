#include "engine/row_storage.hpp"

#include <cstdint>
#include <cstdlib>

#if defined(__linux__)
#include <sys/mman.h>
#endif

namespace unfurl::detail {
namespace {

// The x86-64 huge page; blocks this large are aligned to it, so that the whole block can be
// backed by huge pages (a smaller block keeps the ordinary allocator: a huge page would waste
// most of itself).
constexpr std::size_t kHugePage = std::size_t{2} << 20;

bool is_large(std::size_t bytes) {
  return bytes >= kHugePage;
}

std::size_t rounded_up(std::size_t bytes) {
  return (bytes + kHugePage - 1) / kHugePage * kHugePage;
}

}  // namespace

void* allocate_first_touch(std::size_t bytes) {
  if (!is_large(bytes)) return ::operator new(bytes);
  if (bytes > static_cast<std::size_t>(-1) - kHugePage) throw std::bad_alloc();
  void* block = std::aligned_alloc(kHugePage, rounded_up(bytes));
  if (!block) throw std::bad_alloc();
  advise_huge_pages(block, rounded_up(bytes));  // nothing is touched here
  return block;
}

void advise_huge_pages(void* data, std::size_t bytes) noexcept {
#if defined(MADV_HUGEPAGE)
  // Advice only: where the kernel has huge pages off (or "always") nothing changes but the
  // fault count. madvise wants an aligned start; the partial pages at the ends stay small.
  const auto begin = reinterpret_cast<std::uintptr_t>(data);
  const std::uintptr_t first = (begin + kHugePage - 1) / kHugePage * kHugePage;
  const std::uintptr_t last = (begin + bytes) / kHugePage * kHugePage;
  if (data && last > first)
    (void)madvise(reinterpret_cast<void*>(first), last - first, MADV_HUGEPAGE);
#else
  (void)data, (void)bytes;
#endif
}

void free_first_touch(void* block, std::size_t bytes) noexcept {
  if (!block) return;
  if (is_large(bytes))
    std::free(block);
  else
    ::operator delete(block);
}

}  // namespace unfurl::detail
