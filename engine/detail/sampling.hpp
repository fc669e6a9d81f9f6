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

// The name of the interval below, for the map, the JSON and the printed line.
inline constexpr const char* kIntervalMethod =
    "betting, bounded terms, without replacement (Waudby-Smith and Ramdas 2020, 2024)";

struct MeanInterval {
  double mean = 0;  // mean of the sampled terms
  double low = 0;   // 95% interval of the population mean; low == high == mean only when the
  double high = 0;  // sample is the whole population
};

// 95% confidence interval for the mean of a population of `population` values in [0, 1],
// from `terms`, a uniform sample drawn without replacement.
//
// Why not a normal or bootstrap interval: when a few points carry most of the error (10
// misplaced points among 5,000), most samples of a few hundred contain none of them, and any
// interval built from the sample's spread alone (normal, percentile or BCa bootstrap) then
// sits on the light points and misses the mean; its width can even be zero. The terms'
// known bounds are what rule that out: this is the betting interval of Waudby-Smith and
// Ramdas ("Estimating means of bounded random variables by betting", JRSS B 86, 2024;
// without replacement: "Confidence sequences for sampling without replacement", NeurIPS
// 2020). For a candidate mean m, a gambler bets on each sampled term in turn against the mean
// of the terms not yet seen (which m fixes); m is rejected when either of two such bets
// (on terms above and below) multiplies its capital by 2/alpha (alpha = 0.05). The interval
// holds the m not rejected; its coverage is at least 95% for every population in [0, 1]
// (Ville's inequality), not only asymptotically. Bets: the predictable plug-in
// lambda_i = sqrt(2 log(2/alpha) / (n s_{i-1}^2)), capped at 3/4 of what keeps the capital
// positive, s^2 the running variance with a prior of 1/4 (the papers' choices for a fixed n).
//
// The bets follow the terms in a seeded random order (`order_seed`), since the sample may be
// sorted by row. Deterministic in (terms, population, order_seed).
MeanInterval mean_interval(std::span<const double> terms, std::size_t population,
                           std::uint64_t order_seed);

}  // namespace unfurl::detail
