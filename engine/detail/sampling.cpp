#include "engine/detail/sampling.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numeric>
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

namespace {

constexpr double kAlpha = 0.05;
constexpr double kCap = 0.75;  // of the largest bet that keeps the capital positive

// The bets' sizes before the cap, lambda_i = sqrt(2 log(2/alpha) / (n s_{i-1}^2)), with the
// running mean and variance of the papers (priors 1/2 and 1/4). They depend on the terms
// only, not on the candidate mean, so the capital falls monotonically in m.
std::vector<double> bet_sizes(const std::vector<double>& x) {
  const double n = static_cast<double>(x.size());
  const double scale = 2.0 * std::log(2.0 / kAlpha) / n;
  std::vector<double> lambda(x.size());
  double sum = 0.5, squares = 0.25;
  for (std::size_t i = 0; i < x.size(); ++i) {
    lambda[i] = std::sqrt(scale / (squares / static_cast<double>(i + 1)));
    sum += x[i];
    const double running_mean = sum / static_cast<double>(i + 2);
    squares += (x[i] - running_mean) * (x[i] - running_mean);
  }
  return lambda;
}

// log of the capital after betting on every term that it lies above the mean of the terms not
// yet seen, were the population mean m. Large capital rejects m as too low.
double log_capital(const std::vector<double>& x, const std::vector<double>& lambda,
                   double population, double m) {
  double seen = 0, log_k = 0;
  for (std::size_t i = 0; i < x.size(); ++i) {
    const double rest_mean = (population * m - seen) / (population - static_cast<double>(i));
    // Below 0: the terms seen already exceed N m, so m is impossible. Above 1: m is too
    // high to be possible, which the opposite bet rejects.
    if (rest_mean < 0) return std::numeric_limits<double>::infinity();
    if (rest_mean > 1) return -std::numeric_limits<double>::infinity();
    const double bet = rest_mean > 0 ? std::min(lambda[i], kCap / rest_mean) : lambda[i];
    log_k += std::log1p(bet * (x[i] - rest_mean));
    seen += x[i];
  }
  return log_k;
}

// The smallest candidate mean the upward bet does not reject, by bisection between the
// smallest and largest means the sample allows.
double lower_bound(const std::vector<double>& x, double population) {
  const double seen = std::accumulate(x.begin(), x.end(), 0.0);
  const std::vector<double> lambda = bet_sizes(x);
  const double threshold = std::log(2.0 / kAlpha);
  double lo = seen / population;
  double hi = (seen + population - static_cast<double>(x.size())) / population;
  if (log_capital(x, lambda, population, lo) < threshold) return lo;
  // Invariant: lo rejected, hi not (at hi the terms not seen all equal 1 and every bet loses).
  for (int step = 0; step < 64 && hi - lo > 1e-12 * std::max(hi, 1e-300); ++step) {
    const double mid = 0.5 * (lo + hi);
    (log_capital(x, lambda, population, mid) >= threshold ? lo : hi) = mid;
  }
  return hi;
}

}  // namespace

MeanInterval mean_interval(std::span<const double> terms, std::size_t population,
                           std::uint64_t order_seed) {
  MeanInterval out;
  const std::size_t n = terms.size();
  if (n == 0) return out;
  out.mean = std::accumulate(terms.begin(), terms.end(), 0.0) / static_cast<double>(n);
  out.low = out.high = out.mean;
  if (n >= population) return out;
  std::vector<double> x(terms.begin(), terms.end());
  Random rng(order_seed);
  for (std::size_t i = n - 1; i > 0; --i) std::swap(x[i], x[rng.below(i + 1)]);  // Fisher-Yates
  const double big_n = static_cast<double>(population);
  out.low = lower_bound(x, big_n);
  for (double& t : x) t = 1.0 - t;
  out.high = 1.0 - lower_bound(x, big_n);
  // The interval always holds the sample mean in practice; keeping it there only widens.
  out.low = std::min(out.low, out.mean);
  out.high = std::max(out.high, out.mean);
  return out;
}

}  // namespace unfurl::detail
