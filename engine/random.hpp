// Seeded random numbers that give the same stream on every platform and standard library:
// std::uniform_real_distribution and std::normal_distribution are not specified bit for bit,
// so the conversions from the 64-bit engine are written out here.
#pragma once

#include <cmath>
#include <cstdint>
#include <random>

namespace unfurl {

class Random {
 public:
  explicit Random(std::uint64_t seed) : engine_(seed) {}

  // Uniform in [0, 1) with 53 random bits.
  double uniform() { return static_cast<double>(engine_() >> 11) * 0x1.0p-53; }
  // Uniform integer in [0, n), n > 0 (rejection sampling, no modulo bias).
  std::uint64_t below(std::uint64_t n) {
    const std::uint64_t limit = UINT64_MAX - UINT64_MAX % n;
    std::uint64_t x;
    do x = engine_();
    while (x >= limit);
    return x % n;
  }
  // Standard normal by Box-Muller (the second value of each pair is kept for the next call).
  double normal() {
    if (has_spare_) {
      has_spare_ = false;
      return spare_;
    }
    double u1;
    do u1 = uniform();
    while (u1 <= 0.0);
    const double u2 = uniform();
    const double r = std::sqrt(-2.0 * std::log(u1));
    spare_ = r * std::sin(2.0 * M_PI * u2);
    has_spare_ = true;
    return r * std::cos(2.0 * M_PI * u2);
  }
  std::uint64_t next() { return engine_(); }

 private:
  std::mt19937_64 engine_;
  double spare_ = 0.0;
  bool has_spare_ = false;
};

}  // namespace unfurl
