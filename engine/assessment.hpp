// How far to trust a map: the quality scores of engine/quality*.hpp gathered for one map.
// - neighbourhood scores: trustworthiness, continuity, kNN preservation, per k;
// - residual variance curve over 1..m axes, from the landmark geodesic rows when given, else
//   from a seeded sample of input-space pairs (stated in the curve: sampled);
// - intrinsic dimension (Levina-Bickel) from the input points' exact k nearest distances;
// - each axis' share of the positive eigenvalues: its eigenvalue over the positive mass of the
//   WHOLE spectrum of B (exact or estimated, engine/spectral.hpp SpectrumMass), never over a
//   partial list; axes at or below the eigenvalue noise floor are named.
#pragma once

#include <cstddef>
#include <optional>
#include <string>
#include <vector>

#include "engine/distance_rows.hpp"
#include "engine/points.hpp"
#include "engine/quality.hpp"
#include "engine/quality_dimension.hpp"
#include "engine/quality_residual.hpp"
#include "engine/stop.hpp"

namespace unfurl {

struct AssessOptions {
  QualityOptions neighbourhoods;        // k values, exact or sampled, seed
  bool residual = true;                 // compute the residual variance curve
  std::size_t residual_pairs = 200000;  // pairs sampled when no geodesic rows are given
  // The intrinsic dimension estimate (k below the number of points), or none.
  std::optional<DimensionOptions> dimension = DimensionOptions{};
  // Throws OptionError naming the field (of this struct or of a nested one).
  void validate(std::size_t points) const;
};

// What the spectral stage says of the map's axes (all empty / zero for a foreign map).
struct AxisSpectrum {
  std::vector<double> top;   // eigenvalues, descending: one per map axis first
  double positive_mass = 0;  // sum of every positive eigenvalue of B; 0: unknown (then the
                             // sum of `top`, flagged as partial)
  bool mass_exact = false;   // positive_mass summed over the whole spectrum
  double mass_error = 0;     // standard error of an estimated positive_mass
  double noise_floor = 0;    // eigenvalues at or below it carry no structure (0: not stated)
};

struct Assessment {
  NeighbourhoodScores neighbourhoods;
  std::optional<ResidualVarianceCurve> residual;
  std::optional<IntrinsicDimension> dimension;
  std::vector<double> axis_share;  // eigenvalue of each map axis / positive mass of the spectrum
  std::vector<double> axis_share_error;  // standard error of each share (0 when exact)
  std::string axis_share_basis;          // "whole spectrum", "estimated whole spectrum" or
                                         // "listed eigenvalues only" (a foreign map's list)
  std::vector<std::size_t> noise_axes;   // axes (1-based) at or below the noise floor
  double seconds = 0;
  std::vector<std::string> warnings;
};

// input row r and map row r are the same point. geodesic: rows whose columns are map rows
// (EmbedResult::geodesic), or null for a map made elsewhere. spectrum: may be empty for a
// foreign map.
Assessment assess_map(const PointSet& input, const PointSet& map, const DistanceRows* geodesic,
                      const AxisSpectrum& spectrum, const AssessOptions& options,
                      StopToken stop = {});

// The axis shares and noise axes of `map_axes` axes (part of assess_map).
void assess_axes(const AxisSpectrum& spectrum, std::size_t map_axes, Assessment& a);

}  // namespace unfurl
