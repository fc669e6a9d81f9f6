// Classical MDS of geodesic distances: landmark MDS (de Silva and Tenenbaum 2004) from L x N
// landmark rows, or exact mode from all N x N rows (Isomap, Tenenbaum et al. 2000).
//
// With S the squared distances and J = I - 11'/n, B = -1/2 J S J; the map's axes are the top
// eigenvectors of B scaled by sqrt(eigenvalue) (Schoenberg 1935; Young and Householder 1938).
// Negative eigenvalues measure how far the geodesic distances are from Euclidean; they and
// the eigenvalues not kept are reported, never square-rooted.
//
// Noise axes: an axis whose eigenvalue is at or below the noise floor of float32 geodesics
// (summary.noise_floor; its rule in spectral.cpp and the README) is named in
// summary.noise_axes with a warning; an axis beyond the positive part of the spectrum is set
// to 0, named and warned about the same way. No positive eigenvalue at all: DataError.
// Lanczos non-convergence is a warning with summary.converged = false as long as the top
// `dims` pairs were found; if even those are missing, DataError says so.
// Determinism: each axis' largest-magnitude landmark coordinate is positive (ties: the
// lowest landmark index), axes are ordered by eigenvalue, and every parallel sum has a fixed
// order, so the same rows give the same bytes whatever the thread count.
#pragma once

#include <cmath>
#include <cstddef>
#include <cstdint>
#include <string>
#include <vector>

#include "engine/distance_rows.hpp"
#include "engine/points.hpp"
#include "engine/stop.hpp"

namespace unfurl {

struct SpectralOptions {
  std::size_t dims = 2;            // axes of the map
  std::size_t dense_limit = 1000;  // B of at most this order: dense solver, whole spectrum
  std::size_t krylov = 0;  // Lanczos subspace size (Spectra ncv); 0: max(2 dims + 1, 10), or
                           // 20 with the negative end (detail/eigen_top.hpp says why)
  std::size_t max_iterations = 1000;  // Lanczos restarts before giving up (a warning, not an error)
  double tolerance = 1e-10;           // Lanczos relative tolerance on the eigenvalues
  bool negative_end = true;           // Lanczos: also find the most negative eigenvalues
  // Lanczos only: the whole spectrum's masses are estimated (see SpectrumMass), a score.
  // Off: SpectrumMass::computed is false, the solver finds only the pairs the map needs (dims
  // at each end, not `deflate`) and the probes never run; the dense solver has the masses free.
  bool mass = true;
  std::size_t deflate = 8;       // eigenpairs found at each end (at least dims), deflated
  std::size_t probes = 16;       // random sign vectors of the trace(|B|) estimate
  std::size_t quadrature = 50;   // Lanczos steps per probe
  std::uint64_t probe_seed = 1;  // seed of the probes (the estimate depends on it only)

  // Throws OptionError naming the field. `order` is the order of B: L, or N in exact mode;
  // dims must be at least 1 and below it, krylov (when set) above dims and at most order.
  void validate(std::size_t order) const;
};

// The positive and negative mass of the WHOLE spectrum of B (sums of the positive eigenvalues
// and of |negative| ones), from which the non-Euclidean ratio and the axis shares come.
// Exact when the dense solver computed every eigenvalue. Otherwise estimated without an
// O(n^3) cost: trace(B) is exact (n g / 2, g the mean squared distance), trace(|B|) comes
// from stochastic Lanczos quadrature (engine/detail/absolute_trace.hpp: Hutchinson 1989;
// Ubaru, Chen and Saad, SIAM J. Matrix Anal. Appl. 38, 2017), and
//   negative = (trace|B| - trace B) / 2,  positive = (trace|B| + trace B) / 2.
// Neither is allowed below the sum of the computed eigenvalues of its sign.
struct SpectrumMass {
  bool computed = true;  // false: not computed (SpectralOptions.mass off); only trace is known
  bool exact = false;
  double positive = 0.0;
  double negative = 0.0;
  double trace = 0.0;           // trace(B), always exact
  double standard_error = 0.0;  // of the estimated trace(|B|) over the probes; 0 when exact.
                                // positive and negative each carry half of it
  std::size_t probes = 0;       // estimated: random sign vectors used
  std::size_t steps = 0;        // estimated: Lanczos quadrature steps per probe

  // 0 when not computed: read `computed` before showing it.
  double ratio() const { return positive > 0.0 ? negative / positive : 0.0; }
  // Standard error of ratio() propagated from that of trace(|B|):
  // d(negative / positive) / d trace|B| = trace B / (2 positive^2).
  double ratio_error() const {
    return positive > 0.0 ? standard_error * std::abs(trace) / (2.0 * positive * positive) : 0.0;
  }
};

struct SpectralSummary {
  std::string solver;                   // "dense" (Eigen, whole spectrum) or "lanczos" (Spectra)
  bool converged = true;                // false: Lanczos stopped early; see warnings
  bool spectrum_complete = false;       // spectrum holds every eigenvalue of B
  std::size_t largest = 0;              // spectrum's first `largest` values are B's largest; the
                                        // rest (Lanczos, both ends) its smallest
  std::size_t order = 0;                // order of B (landmarks, or nodes in exact mode)
  std::size_t points = 0;               // rows of the map
  std::size_t iterations = 0;           // Lanczos restarts
  std::size_t operations = 0;           // Lanczos operator applications
  std::size_t positive = 0;             // positive eigenvalues among those computed
  std::size_t negative = 0;             // negative eigenvalues among those computed
  std::size_t operations_mass = 0;      // operator applications of the mass estimate
  double noise_floor = 0.0;             // eigenvalues at or below it are float32 rounding noise
  std::vector<std::size_t> noise_axes;  // map axes (1-based) at or below the floor
  double seconds = 0.0;                 // wall time of the stage
  int threads = 0;                      // OpenMP threads
  std::vector<std::string> warnings;
};

struct SpectralResult {
  PointSet coords;                      // N x dims float32: the map, in node order
  std::vector<double> landmark_coords;  // L x dims (N x dims in exact mode), row-major
  std::vector<double> spectrum;         // eigenvalues of B, descending: whole when dense, else
                                        // the top `deflate` and (negative_end) the bottom ones
  SpectrumMass mass;                    // of the whole spectrum (exact or estimated)
  double negative_ratio = 0.0;          // mass.ratio(): sum |negative| / sum positive, whole
  SpectralSummary summary;
};

// The masses of a spectrum known whole (exact = true).
SpectrumMass whole_spectrum_mass(const std::vector<double>& spectrum);

// Landmark MDS from the rows of pick_landmarks (sources = landmarks). Memory: the rows plus
// L x L doubles and the N x dims output; nothing N x N. Throws DataError when the rows are
// malformed (a source out of range, a non-finite distance) or B has too few positive
// eigenvalues; InterruptedError when `stop` is requested.
SpectralResult landmark_mds(const DistanceRows& landmark_rows, const SpectralOptions& options,
                            StopToken stop = {});

// Each landmark's mean symmetrised squared distance to the landmarks (the row means of S that
// landmark_mds's triangulation subtracts), computed as landmark_mds computes them, for
// placing new points into its map. The sources must lie within the rows.
std::vector<double> landmark_mean_squared(const DistanceRows& landmark_rows);

// Exact mode: all_rows must be N x N with sources 0..N-1 in order (all_geodesic_rows).
// B stays implicit above dense_limit (see engine/detail/centred_operator.hpp).
SpectralResult exact_mds(const DistanceRows& all_rows, const SpectralOptions& options,
                         StopToken stop = {});

// Bytes the eigen solver holds besides the rows for B of this order (L, or N in exact mode).
// Dense (order <= dense_limit): B, its eigenvectors and Eigen's workspace, 3 order^2 doubles.
// Lanczos: the larger of Spectra's phase (a basis of max(krylov, 2 w + 1) vectors plus the
// residual, w = 2 max(dims, deflate) pairs wanted at both ends (2 dims without the mass), the
// Ritz vectors three times) and the mass estimate's phase (probes x quadrature float32
// vectors, three blocks of probes doubles, the w computed pairs), plus the operator's buffers
// (CentredSquaredOperator::work_bytes for `probes` vectors, one without the mass).
std::size_t spectral_solver_bytes(std::size_t order, const SpectralOptions& options = {});

// Peak bytes of exact mode on n nodes: the N x N float32 rows, spectral_solver_bytes, the
// Dijkstra workspaces of every thread and the output (an upper bound: the workspaces are
// gone by the solver's turn).
std::size_t exact_mode_bytes(std::size_t n, const SpectralOptions& options = {});

}  // namespace unfurl
