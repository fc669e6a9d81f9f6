// Storage for large float arrays that are written in full before anything reads them (the
// geodesic rows: every Dijkstra run first sets its whole row to +infinity, a loaded piece
// overwrites its rows). std::vector<float> zero-fills on resize, on the calling thread: at 10M
// points the 256 landmark rows are 10 GB, and that fill, with the kernel clearing every page it
// first touches, kept one thread busy for seconds while the other waited. Here resize leaves
// the values indeterminate, so the threads that compute the rows touch their own pages first;
// blocks of 2 MiB and more are also offered transparent huge pages (Linux, madvise mode), which
// cuts the page faults 512-fold.
#pragma once

#include <cstddef>
#include <new>
#include <type_traits>
#include <utility>
#include <vector>

namespace unfurl {

namespace detail {
void* allocate_first_touch(std::size_t bytes);  // throws std::bad_alloc
void free_first_touch(void* block, std::size_t bytes) noexcept;

// Offers the whole 2 MiB pages inside [data, data + bytes) as transparent huge pages (advice
// only; Linux madvise mode). Pages touched before the advice keep their small pages.
void advise_huge_pages(void* data, std::size_t bytes) noexcept;

// Reserves n elements of the empty vector v and advises their pages before anything touches
// them: the graph's arrays, which every shortest-path search walks at random.
template <class T, class A>
void reserve_huge_pages(std::vector<T, A>& v, std::size_t n) {
  v.reserve(n);
  advise_huge_pages(v.data(), n * sizeof(T));
}
}  // namespace detail

// An allocator whose value-construction (resize(n), vector(n)) default-initialises instead:
// trivial types are left uninitialised. Construction with arguments is as usual.
template <class T>
struct FirstTouchAllocator {
  using value_type = T;
  FirstTouchAllocator() = default;
  template <class U>
  FirstTouchAllocator(const FirstTouchAllocator<U>&) noexcept {}

  T* allocate(std::size_t n) {
    if (n > static_cast<std::size_t>(-1) / sizeof(T)) throw std::bad_alloc();
    return static_cast<T*>(detail::allocate_first_touch(n * sizeof(T)));
  }
  void deallocate(T* p, std::size_t n) noexcept { detail::free_first_touch(p, n * sizeof(T)); }

  template <class U>
  void construct(U* p) noexcept(std::is_nothrow_default_constructible_v<U>) {
    ::new (static_cast<void*>(p)) U;
  }
  template <class U, class... Args>
  void construct(U* p, Args&&... args) {
    ::new (static_cast<void*>(p)) U(std::forward<Args>(args)...);
  }

  template <class U>
  bool operator==(const FirstTouchAllocator<U>&) const noexcept {
    return true;
  }
};

// resize(n) leaves the new values indeterminate: the owner writes all of them before reading.
using RowValues = std::vector<float, FirstTouchAllocator<float>>;

}  // namespace unfurl
