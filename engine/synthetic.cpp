#include "engine/synthetic.hpp"

#include <cmath>

#include "engine/error.hpp"
#include "engine/random.hpp"

namespace unfurl {
namespace {

void require_rows(std::size_t n, const char* what) {
  if (n == 0) throw OptionError(std::string(what) + ": the number of points must be at least 1");
}

}  // namespace

double swiss_roll_arc_length(double t) {
  return 0.5 * (t * std::sqrt(1.0 + t * t) + std::asinh(t));
}

SyntheticSet swiss_roll(std::size_t n, std::uint64_t seed, double noise) {
  require_rows(n, "swiss roll");
  SyntheticSet s{PointSet(n, 3), PointSet(n, 2), {"arc_length", "height"}};
  Random rng(seed);
  for (std::size_t i = 0; i < n; ++i) {
    const double t = 1.5 * M_PI * (1.0 + 2.0 * rng.uniform());
    const double h = 21.0 * rng.uniform();
    float* p = s.points.row(i);
    p[0] = static_cast<float>(t * std::cos(t) + noise * rng.normal());
    p[1] = static_cast<float>(h + noise * rng.normal());
    p[2] = static_cast<float>(t * std::sin(t) + noise * rng.normal());
    s.truth.row(i)[0] = static_cast<float>(swiss_roll_arc_length(t));
    s.truth.row(i)[1] = static_cast<float>(h);
  }
  return s;
}

SyntheticSet s_curve(std::size_t n, std::uint64_t seed, double noise) {
  require_rows(n, "s-curve");
  SyntheticSet s{PointSet(n, 3), PointSet(n, 2), {"arc_length", "height"}};
  Random rng(seed);
  for (std::size_t i = 0; i < n; ++i) {
    const double t = 3.0 * M_PI * (rng.uniform() - 0.5);
    const double h = 2.0 * rng.uniform();
    const double sign = t < 0 ? -1.0 : (t > 0 ? 1.0 : 0.0);
    float* p = s.points.row(i);
    p[0] = static_cast<float>(std::sin(t) + noise * rng.normal());
    p[1] = static_cast<float>(h + noise * rng.normal());
    p[2] = static_cast<float>(sign * (std::cos(t) - 1.0) + noise * rng.normal());
    s.truth.row(i)[0] = static_cast<float>(t);
    s.truth.row(i)[1] = static_cast<float>(h);
  }
  return s;
}

SyntheticSet ocean_buoys(std::size_t n, std::uint64_t seed, double noise) {
  require_rows(n, "ocean buoys");
  constexpr std::size_t d = kBuoyChannels;
  // Channel responses are fixed by a seed of their own, so every demo run shares the sensors;
  // `seed` only draws the records.
  struct Channel {
    double amp_a, freq_a, phase_a, amp_z, freq_z, phase_z, saturation;
  };
  Random sensor_rng(0x6f6365616e);
  std::vector<Channel> channels(d);
  for (auto& c : channels) {
    c.amp_a = 0.6 + 0.8 * sensor_rng.uniform();
    c.freq_a = 0.8 + 1.4 * sensor_rng.uniform();  // radians per unit of along-current position
    c.phase_a = 2.0 * M_PI * sensor_rng.uniform();
    c.amp_z = 0.6 + 0.8 * sensor_rng.uniform();
    c.freq_z = 0.8 + 1.4 * sensor_rng.uniform();
    c.phase_z = 2.0 * M_PI * sensor_rng.uniform();
    c.saturation = 0.5 + sensor_rng.uniform();  // depth scale of a saturating response
  }
  SyntheticSet s{PointSet(n, d), PointSet(n, 2), {"along_current_km", "depth_m"}};
  Random rng(seed);
  for (std::size_t i = 0; i < n; ++i) {
    const double along_km = 120.0 * rng.uniform();
    const double depth_m = 40.0 * rng.uniform();
    const double a = along_km / 40.0;  // 0..3: the sheet is three times longer than deep
    const double z = depth_m / 40.0;   // 0..1
    float* p = s.points.row(i);
    for (std::size_t j = 0; j < d; ++j) {
      const Channel& c = channels[j];
      const double along = c.amp_a * std::cos(c.freq_a * a + c.phase_a);
      const double depth =
          c.amp_z * std::sin(c.freq_z * z + c.phase_z) + 0.3 * (1.0 - std::exp(-z / c.saturation));
      p[j] = static_cast<float>(along + depth + noise * rng.normal());
    }
    s.truth.row(i)[0] = static_cast<float>(along_km);
    s.truth.row(i)[1] = static_cast<float>(depth_m);
  }
  return s;
}

}  // namespace unfurl
