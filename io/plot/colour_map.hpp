// Colour maps for figures: a perceptually uniform, colour-blind-safe sequential map for
// values and a qualitative palette for categories (sources in colour_map.cpp).
#pragma once

#include <cstddef>

namespace unfurl::io::plot {

struct Rgb {
  double r = 0, g = 0, b = 0;  // each in [0, 1]
};

// viridis at t in [0, 1] (clamped; NaN gives the low end), interpolated between entries.
Rgb viridis(double t);

// Colours of categories that colour-blind readers can tell apart.
inline constexpr std::size_t category_count = 7;
// The colour of category i (repeats after category_count; callers fall back to viridis).
Rgb category_colour(std::size_t i);

}  // namespace unfurl::io::plot
