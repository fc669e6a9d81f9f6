// Out-of-sample placement: new points into an existing landmark map without moving it.
//
// For each new point a: its k nearest reference points n_j (the map's points, after the map's
// preprocessing) by the same exact search back ends as the graph (engine/neighbours.hpp); its
// geodesic distance to each landmark l as
//   delta_l(a) = min_j ( |a - n_j| + g_l(n_j) ),
// g_l the map's landmark geodesic rows (the new point joins the graph by k edges); then the
// triangulation of landmark MDS (de Silva and Tenenbaum, "Sparse multidimensional scaling
// using landmark points", 2004):
//   x_a = -1/2 P (delta(a)^2 - mu),
// P (dims x L) the rows v_k / sqrt(lambda_k) of the landmark Gram matrix's eigenpairs and mu
// the landmarks' mean squared distances (each landmark's mean over the landmarks). This is the
// map's own formula, so a reference point placed again lands on its own map row, and for
// Euclidean distances whose landmarks affinely span the space it is exact. It is the Nystrom
// extension of Isomap (Bengio et al., NIPS 2003).
//
// Far from the map: a point off the manifold still lands somewhere. Each point's distance to
// its nearest reference point is divided by the map's typical neighbour distance (the median
// distance from a reference point to its k (at most N - 1) nearest other reference points, over an
// evenly spaced sample of at most typical_sample reference points: the graph's median edge length);
// a point is "far from the map" above PlaceOptions::far_ratio (default 3: on a uniformly
// sampled sheet the nearest reference point is closer than the median edge length for all
// but a vanishing share of on-manifold points, so 3 typical edges means the point left the
// sheet).
//
// Memory: new points are processed in blocks of block_rows; besides the map (reference
// points, N x L node-major geodesic columns), a block holds its k neighbours (8 bytes each, 16
// during the search) and each thread one row of L doubles. Results do not depend on the thread
// count: each point's sums run over the landmarks in order.
#pragma once

#include <cstddef>
#include <cstdint>
#include <string>
#include <vector>

#include "engine/distance_rows.hpp"
#include "engine/neighbours.hpp"
#include "engine/points.hpp"
#include "engine/stop.hpp"

namespace unfurl {

struct PlaceOptions {
  std::size_t k = 10;                 // reference neighbours per new point (the CLI: the map's k)
  Search search = Search::automatic;  // exact search back end over the reference points
  std::size_t block_rows = 262144;    // new points per block (bounds the working memory)
  double far_ratio = 3.0;             // "far from the map": nearest distance / typical above this
  std::size_t worst = 10;             // farthest points listed in the summary
  std::size_t typical_sample = 2000;  // reference points sampled for the typical distance
  // > 0: the typical neighbour distance to use; 0: measured from the reference points. A
  // caller placing many batches into one map measures it once (typical_neighbour_distance).
  double typical_distance = 0.0;

  // Throws OptionError naming the field ("PlaceOptions.k"); `reference` is the number of
  // reference points (k must not exceed it; the typical distance uses min(k, reference - 1)).
  void validate(std::size_t reference) const;
};

// The triangulation of a landmark map: what x_a = -1/2 P (delta^2 - mu) needs.
struct Triangulation {
  std::size_t dims = 0, landmarks = 0;
  std::vector<double> p;             // dims x L, row k = v_k / sqrt(lambda_k) (0 when lambda <= 0)
  std::vector<double> mean_squared;  // L: each landmark's mean squared distance to the landmarks
  bool operator==(const Triangulation&) const = default;
};

// From the map's landmark rows (L x N, sources = the landmarks' map rows), its landmark
// coordinates (L x dims, v_k sqrt(lambda_k)) and the axes' eigenvalues (the spectrum's first
// dims values): P = coordinates / lambda column by column; mu from the symmetrised landmark
// block, as landmark_mds computes it. DataError when the sizes disagree.
Triangulation triangulation_of_map(const DistanceRows& landmark_rows,
                                   const std::vector<double>& landmark_coords,
                                   const std::vector<double>& eigenvalues, std::size_t dims);

// The landmark geodesic rows node by node: values[n * landmarks + l] = g_l(n), so that a
// point's k neighbours read k contiguous rows.
struct LandmarkColumns {
  std::size_t nodes = 0, landmarks = 0;
  std::vector<float> values;  // nodes x landmarks
};
LandmarkColumns columns_of(const DistanceRows& landmark_rows);

struct FarPoint {
  std::size_t row = 0;  // row of the new point set
  double ratio = 0.0;   // nearest reference distance / typical distance
};

struct PlaceSummary {
  std::size_t points = 0, reference = 0, landmarks = 0, dims = 0, k = 0;
  Search search_used = Search::tree;
  double typical_distance = 0.0;  // the map's median neighbour distance (see file comment)
  double far_ratio = 0.0;         // the threshold used
  std::size_t far = 0;            // points above it
  std::vector<FarPoint> worst;    // the largest ratios, largest first (at most options.worst)
  double seconds = 0.0;
  std::vector<std::string> warnings;
};

struct PlaceResult {
  PointSet coords;                   // points x dims float32, rows as the new points
  std::vector<float> nearest_ratio;  // per point: nearest reference distance / typical
  std::vector<std::uint8_t> far;     // per point: 1 when far from the map
  PlaceSummary summary;
};

// The map's typical neighbour distance (see the file comment); 0 when every sampled
// neighbour is a duplicate at distance 0. Throws as place_points.
double typical_neighbour_distance(const PointSet& reference, const PlaceOptions& options,
                                  StopToken stop = {});

// reference: N x d in map-row order, already preprocessed as the map's points were; columns:
// the N x L landmark distances of those rows; points: the new points, preprocessed the same.
// Throws OptionError for bad options, DataError when the sizes disagree (naming the
// columns: "new points have 4 columns, the map's points 3") or values are not finite,
// InterruptedError when `stop` is requested (polled per block).
PlaceResult place_points(const PointSet& reference, const LandmarkColumns& columns,
                         const Triangulation& triangulation, const PointSet& points,
                         const PlaceOptions& options, StopToken stop = {});

}  // namespace unfurl
