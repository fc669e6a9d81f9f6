#include "engine/detail/parallel_sort.hpp"

#include <omp.h>

#include <algorithm>
#include <catch2/catch.hpp>
#include <cstdint>
#include <utility>
#include <vector>

#include "engine/random.hpp"

namespace {

// Keys with many repeats, made distinct by their index, as the node-order and duplicate
// stages sort them.
std::vector<std::pair<std::uint64_t, std::uint32_t>> keyed(std::size_t n, std::uint64_t seed) {
  unfurl::Random rng(seed);
  std::vector<std::pair<std::uint64_t, std::uint32_t>> v(n);
  for (std::size_t i = 0; i < n; ++i) v[i] = {rng.below(n / 8 + 1), static_cast<std::uint32_t>(i)};
  return v;
}

}  // namespace

// The oracle is the standard library's std::sort (ISO C++ [alg.sort]): under a strict total
// order there is one sorted sequence, so every thread count must give exactly its result.
TEST_CASE("parallel_sort equals std::sort for any thread count and size", "[parallel_sort]") {
  const int before = omp_get_max_threads();
  for (const std::size_t n : {std::size_t{0}, std::size_t{1}, std::size_t{1000}, std::size_t{65536},
                              std::size_t{200003}}) {
    auto expected = keyed(n, 7 + n);
    const auto input = expected;
    std::sort(expected.begin(), expected.end());
    for (const int threads : {1, 2, 3, 8}) {
      omp_set_num_threads(threads);
      auto got = input;
      unfurl::detail::parallel_sort(got);
      CHECK(got == expected);
    }
  }
  omp_set_num_threads(before);
}

TEST_CASE("parallel_sort takes the given order", "[parallel_sort]") {
  const int before = omp_get_max_threads();
  omp_set_num_threads(2);
  auto v = keyed(100000, 3);
  auto expected = v;
  const auto later_first = [](const auto& a, const auto& b) { return b < a; };
  std::sort(expected.begin(), expected.end(), later_first);
  unfurl::detail::parallel_sort(v, later_first);
  CHECK(v == expected);
  omp_set_num_threads(before);
}
