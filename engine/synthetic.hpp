// Synthetic point sets with known ground truth, for tests, benchmarks and the demo.
// Each generator returns the points and, row for row, the hidden coordinates they were made
// from (the ground truth a good map should recover up to rotation, reflection and shift).
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "engine/points.hpp"

namespace unfurl {

struct SyntheticSet {
  PointSet points;                       // N x d
  PointSet truth;                        // N x (number of hidden quantities)
  std::vector<std::string> truth_names;  // one name per truth column
};

// Swiss roll as the common generator draws it: t = 1.5 pi (1 + 2u), h = 21 u',
// point (t cos t, h, t sin t), plus isotropic Gaussian noise of standard deviation `noise`.
// Ground truth: (arc length s(t) along the spiral, h), an isometric parametrisation.
SyntheticSet swiss_roll(std::size_t n, std::uint64_t seed, double noise = 0.0);

// Arc length of the spiral (t cos t, t sin t) from 0 to t: 1/2 [t sqrt(1+t^2) + asinh t].
double swiss_roll_arc_length(double t);

// S-curve: t = 3 pi (u - 1/2), point (sin t, 2u', sign(t)(cos t - 1)); t is already arc
// length, so the ground truth (t, 2u') fills a 3 pi x 2 rectangle.
SyntheticSet s_curve(std::size_t n, std::uint64_t seed, double noise = 0.0);

// The demo scenario (invented): a fleet of drifting ocean buoys; every record holds 40 sensor
// channels that respond smoothly and nonlinearly to two hidden quantities, the distance
// along the current (0..120 km) and the depth of the sensor string (0..40 m), plus noise.
// Each channel's response is a sum of smooth periodic and saturating terms with its own
// seeded frequencies and phases, so the 2-D sheet is folded through all 40 dimensions.
SyntheticSet ocean_buoys(std::size_t n, std::uint64_t seed, double noise = 0.02);
inline constexpr std::size_t kBuoyChannels = 40;

}  // namespace unfurl
