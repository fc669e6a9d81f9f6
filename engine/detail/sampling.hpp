// The sampling pieces of the sampled quality estimates, separate so tests can check the
// interval's coverage on many draws without rerunning the ranking.
#pragma once

#include <cstddef>
#include <cstdint>
#include <span>
#include <vector>

namespace unfurl::detail {

// `count` distinct rows of [0, n), uniform without replacement (Floyd's algorithm), ascending.
// Depends on the seed only. count <= n.
std::vector<std::uint32_t> sample_rows(std::size_t n, std::size_t count, std::uint64_t seed);

struct MeanInterval {
  double mean = 0;  // mean of the sampled terms
  double half = 0;  // half-width of the 95% interval of the population mean
};

// Normal approximation to the sampling distribution of the mean of terms drawn without
// replacement from a population of `population` values: half = 1.96 s / sqrt(n) *
// sqrt((N - n) / (N - 1)), s the sample standard deviation (n - 1 denominator).
MeanInterval mean_interval(std::span<const double> terms, std::size_t population);

}  // namespace unfurl::detail
