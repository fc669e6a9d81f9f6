// Classical MDS of geodesic distances: landmark MDS (de Silva and Tenenbaum 2004) from L x N
// landmark rows, or exact mode from all N x N rows (Isomap, Tenenbaum et al. 2000).
//
// With S the squared distances and J = I - 11'/n, B = -1/2 J S J; the map's axes are the top
// eigenvectors of B scaled by sqrt(eigenvalue) (Schoenberg 1935; Young and Householder 1938).
// Negative eigenvalues measure how far the geodesic distances are from Euclidean; they and
// the eigenvalues not kept are reported, never square-rooted.
//
// Fewer than `dims` positive eigenvalues: DataError saying how many there are (the caller
// can retry with that many axes); a map with silently missing axes is never returned.
// Lanczos non-convergence is a warning with summary.converged = false as long as the top
// `dims` pairs were found; if even those are missing, DataError says so.
// Determinism: each axis' largest-magnitude landmark coordinate is positive (ties: the
// lowest landmark index), axes are ordered by eigenvalue, and every parallel sum has a fixed
// order, so the same rows give the same bytes whatever the thread count.
#pragma once

#include <cstddef>
#include <string>
#include <vector>

#include "engine/distance_rows.hpp"
#include "engine/points.hpp"
#include "engine/stop.hpp"

namespace unfurl {

struct SpectralOptions {
  std::size_t dims = 2;               // axes of the map
  std::size_t dense_limit = 1000;     // B of at most this order: dense solver, whole spectrum
  std::size_t krylov = 0;             // Lanczos subspace size (Spectra ncv); 0: max(2 dims + 1, 20)
  std::size_t max_iterations = 1000;  // Lanczos restarts before giving up (a warning, not an error)
  double tolerance = 1e-10;           // Lanczos relative tolerance on the eigenvalues
  bool negative_end = true;           // Lanczos: also find the dims most negative eigenvalues

  // Throws OptionError naming the field. `order` is the order of B: L, or N in exact mode;
  // dims must be at least 1 and below it, krylov (when set) above dims and at most order.
  void validate(std::size_t order) const;
};

struct SpectralSummary {
  std::string solver;              // "dense" (Eigen, whole spectrum) or "lanczos" (Spectra)
  bool converged = true;           // false: Lanczos stopped early; see warnings
  bool spectrum_complete = false;  // spectrum holds every eigenvalue of B
  std::size_t order = 0;           // order of B (landmarks, or nodes in exact mode)
  std::size_t points = 0;          // rows of the map
  std::size_t iterations = 0;      // Lanczos restarts
  std::size_t operations = 0;      // Lanczos operator applications
  std::size_t positive = 0;        // positive eigenvalues among those computed
  std::size_t negative = 0;        // negative eigenvalues among those computed
  double seconds = 0.0;            // wall time of the stage
  int threads = 0;                 // OpenMP threads
  std::vector<std::string> warnings;
};

struct SpectralResult {
  PointSet coords;                      // N x dims float32: the map, in node order
  std::vector<double> landmark_coords;  // L x dims (N x dims in exact mode), row-major
  std::vector<double> spectrum;         // eigenvalues of B, descending: whole when dense, else
                                        // the top dims and (negative_end) the bottom dims
  double negative_ratio = 0.0;          // sum |negative| / sum positive, over `spectrum`
  SpectralSummary summary;
};

// Landmark MDS from the rows of pick_landmarks (sources = landmarks). Memory: the rows plus
// L x L doubles and the N x dims output; nothing N x N. Throws DataError when the rows are
// malformed (a source out of range, a non-finite distance) or B has too few positive
// eigenvalues; InterruptedError when `stop` is requested.
SpectralResult landmark_mds(const DistanceRows& landmark_rows, const SpectralOptions& options,
                            StopToken stop = {});

// Exact mode: all_rows must be N x N with sources 0..N-1 in order (all_geodesic_rows).
// B stays implicit above dense_limit (see engine/detail/centred_operator.hpp).
SpectralResult exact_mds(const DistanceRows& all_rows, const SpectralOptions& options,
                         StopToken stop = {});

// Peak bytes of exact mode on n nodes: the N x N float32 rows, the operator's work buffers,
// the Lanczos basis and the output; the caller refuses jobs beyond its memory with this figure.
std::size_t exact_mode_bytes(std::size_t n, const SpectralOptions& options = {});

}  // namespace unfurl
