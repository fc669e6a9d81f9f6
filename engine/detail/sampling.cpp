#include "engine/detail/sampling.hpp"

#include <algorithm>
#include <cmath>
#include <unordered_set>

#include "engine/random.hpp"

namespace unfurl::detail {

std::vector<std::uint32_t> sample_rows(std::size_t n, std::size_t count, std::uint64_t seed) {
  Random rng(seed);
  std::unordered_set<std::uint32_t> chosen;
  chosen.reserve(count * 2);
  std::vector<std::uint32_t> rows;
  rows.reserve(count);
  // Floyd: for j = n-count .. n-1 take a uniform t in [0, j]; if t is taken, take j (never
  // taken yet, as every earlier pick is below j).
  for (std::size_t j = n - count; j < n; ++j) {
    const auto t = static_cast<std::uint32_t>(rng.below(j + 1));
    const auto pick = chosen.insert(t).second ? t : static_cast<std::uint32_t>(j);
    if (pick != t) chosen.insert(pick);
    rows.push_back(pick);
  }
  std::sort(rows.begin(), rows.end());
  return rows;
}

MeanInterval mean_interval(std::span<const double> terms, std::size_t population) {
  MeanInterval out;
  const std::size_t n = terms.size();
  if (n == 0) return out;
  for (double t : terms) out.mean += t;
  out.mean /= static_cast<double>(n);
  if (n < 2 || n >= population) return out;
  double var = 0;
  for (double t : terms) var += (t - out.mean) * (t - out.mean);
  var /= static_cast<double>(n - 1);
  const double z = 1.959963984540054;  // two-sided 95% standard normal quantile
  const double fpc =
      std::sqrt(static_cast<double>(population - n) / static_cast<double>(population - 1));
  out.half = z * std::sqrt(var / static_cast<double>(n)) * fpc;
  return out;
}

}  // namespace unfurl::detail
