#include "engine/assessment.hpp"

#include "engine/error.hpp"
#include "engine/neighbours.hpp"
#include "engine/timer.hpp"

namespace unfurl {

void AssessOptions::validate(std::size_t points) const {
  neighbourhoods.validate(points);
  if (residual && residual_pairs == 0)
    throw OptionError("AssessOptions.residual_pairs", "must be at least 1, got 0");
  if (!dimension) return;
  dimension->validate();
  if (dimension->k >= points)
    throw OptionError("DimensionOptions.k", "must be below the number of points (" +
                                                std::to_string(points) + "), got " +
                                                std::to_string(dimension->k));
}

Assessment assess_map(const PointSet& input, const PointSet& map, const DistanceRows* geodesic,
                      const AxisSpectrum& spectrum, const AssessOptions& options, StopToken stop) {
  const Stopwatch watch;
  if (input.rows != map.rows)
    throw DataError("the map has " + std::to_string(map.rows) + " rows but the points have " +
                    std::to_string(input.rows));
  options.validate(input.rows);
  const ProgressStep step = stop.step("scores", 0);  // the scored points, once they are drawn
  Assessment a;
  a.neighbourhoods = neighbourhood_scores(input, map, options.neighbourhoods, stop);
  for (const auto& w : a.neighbourhoods.warnings) a.warnings.push_back("neighbourhoods: " + w);

  if (options.residual) {
    if (geodesic && geodesic->rows > 0) {
      if (geodesic->cols != map.rows)
        throw InternalError("geodesic rows have " + std::to_string(geodesic->cols) +
                            " columns for a map of " + std::to_string(map.rows) + " rows");
      a.residual = residual_variance(*geodesic, map, stop);
      a.warnings.push_back(
          "residual variance: from the landmark rows only (landmark-to-point pairs); "
          "landmarks sit at the edges, so it can read low");
    } else {
      const auto pairs = sample_pair_distances(
          input, {.count = options.residual_pairs, .seed = options.neighbourhoods.seed});
      a.residual = residual_variance(pairs, map, stop);
      a.residual->drawn = std::to_string(pairs.size()) +
                          " pairs of rows drawn uniformly at random, input-space distances";
      a.warnings.push_back(
          "residual variance: no geodesic rows, so against input-space distances of sampled "
          "pairs");
    }
  }

  if (options.dimension) {
    // On distinct points; data that give no estimate (too few distinct points, a lattice)
    // leave a warning, not a failure after the whole embedding has run.
    try {
      a.dimension = intrinsic_dimension(input, *options.dimension, stop);
      for (const auto& w : a.dimension->warnings) a.warnings.push_back("dimension: " + w);
    } catch (const DataError& e) {
      a.warnings.push_back(std::string("dimension: no estimate: ") + e.what());
    }
  }

  assess_axes(spectrum, map.cols, a);
  a.seconds = watch.seconds();
  return a;
}

void assess_axes(const AxisSpectrum& spectrum, std::size_t map_axes, Assessment& a) {
  const std::vector<double>& top = spectrum.top;
  double positive = spectrum.positive_mass;
  a.axis_share_basis = spectrum.mass_exact ? "whole spectrum" : "estimated whole spectrum";
  if (!(positive > 0)) {
    positive = 0;
    for (double v : top)
      if (v > 0) positive += v;
    a.axis_share_basis = "listed eigenvalues only";
    if (!top.empty())
      a.warnings.push_back(
          "axis share: the map does not record the whole spectrum's positive mass, so the "
          "shares are of the listed eigenvalues only and may read high");
  }
  for (std::size_t d = 0; d < map_axes && d < top.size(); ++d) {
    const double share = positive > 0 && top[d] > 0 ? top[d] / positive : 0.0;
    a.axis_share.push_back(share);
    a.axis_share_error.push_back(positive > 0 ? share * spectrum.mass_error / positive : 0.0);
    if (spectrum.noise_floor > 0 && top[d] <= spectrum.noise_floor) a.noise_axes.push_back(d + 1);
  }
}

}  // namespace unfurl
