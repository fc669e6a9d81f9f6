// Neighbourhood quality of a map: trustworthiness T(k), continuity C(k) and k-nearest-neighbour
// preservation, exact or from a seeded sample of query points.
//
// Definitions (Venna and Kaski, ICANN 2001; Neural Networks 19, 2006):
//   T(k) = 1 - 2 / (N k (2N - 3k - 1)) * sum_i sum_{j in U_k(i)} (r(i, j) - k)
// U_k(i): the points among i's k nearest in the map but not among its k nearest in input space;
// r(i, j): the rank (1-based) of j among i's input-space neighbours. C(k) swaps the two spaces.
// Both need k < N/2. Input neighbours use the Euclidean distance on the original points.
//
// Ranks and ties: neighbours are ordered by (distance, row index): equal distances go to the
// lower row, as a stable sort of the distance row orders them. A point is excluded from its
// own neighbours by its index, never by position, so duplicates are ordinary neighbours at
// distance 0. Distances are exact squared differences in double (no N x N storage).
//
// Per-point terms: for a scored point i, t_term = 2 / (k (2N - 3k - 1)) * sum_{j in U_k(i)}
// (r(i, j) - k), which lies in [0, 1] (1 when i's k map neighbours are its k farthest input
// points), and 1 - T is the mean of t_term over all N points. c_term likewise for 1 - C.
//
// Sampled estimate: a uniform sample without replacement of n query points (seeded), each
// ranked exactly against all N points; T is estimated by 1 - mean(t_term), and its 95%
// interval comes from the betting interval for a bounded mean sampled without replacement
// (Waudby-Smith and Ramdas; see engine/detail/sampling.hpp), which uses the terms' bounds
// [0, 1] and so keeps its coverage when a few points carry most of the error and the sample
// happens to miss them (a normal or bootstrap interval does not). kNN preservation likewise
// (per-point fractions in [0, 1]). Intervals have zero width only when every point is scored.
// Results depend on the seed, never on the number of threads.
//
// Cost: every query point is ranked against all N points in both spaces, parallel over
// blocks of query points, by one of three ways to the same ranks: in a few dimensions (both
// spaces at most 4) by counting in a k-d tree per space (engine/detail/rank_tree.hpp: about
// log N per neighbour, more for ranks far out); in many input dimensions the input-space
// distances come from float32 products, and only the points whose order their error bound
// leaves in doubt are computed in double (engine/detail/rank_products.hpp); otherwise, and
// for the map beside the products, a direct double scan (about N (d + m) operations per
// query), where misplaced neighbours ranked beyond about max(8k, k + 96, min(N/256, 1024))
// candidates cost one more scan. Memory: two trees (about 30 bytes per point and dimension),
// or a centred float copy of the input for the products, or a transposed float copy of each
// point set (when it fits in 1 GiB; else chunks are transposed on the fly), plus
// O(block x chunk) per thread; never N x N.
#pragma once

#include <cstddef>
#include <cstdint>
#include <string>
#include <vector>

#include "engine/points.hpp"
#include "engine/stop.hpp"

namespace unfurl {

enum class ScoreMethod {
  automatic,  // exact up to exact_limit points, sampled beyond
  exact,      // every point is a query point
  sampled,    // `sample` query points drawn with `seed`
};

// "automatic", "exact" or "sampled": the names for messages, files and option values.
const char* score_method_name(ScoreMethod method);

// The default neighbourhood size for N points: min(12, (N - 1) / 2), the largest k below N/2
// when N is small; 0 (no valid k) below 3 points.
std::size_t default_score_k(std::size_t n);

struct QualityOptions {
  std::vector<std::size_t> ks = {12};           // neighbourhood sizes; each 1 <= k < N/2
  ScoreMethod method = ScoreMethod::automatic;  // exact up to exact_limit points, then sampled
  std::size_t exact_limit = 50000;              // largest N scored exactly by `automatic`
  std::size_t sample = 2000;  // query points when sampled (at least 2; all N if larger than N)
  std::uint64_t seed = 1;     // seed of the query sample
  int threads = 0;            // OpenMP threads; 0: all that OpenMP offers

  // Throws OptionError naming the field (ks, sample, exact_limit, threads) for N points.
  void validate(std::size_t n) const;
};

struct NeighbourhoodScore {
  std::size_t k = 0;
  double trustworthiness = 0;        // T(k), or its estimate when sampled
  double continuity = 0;             // C(k), or its estimate when sampled
  double knn_preservation = 0;       // mean fraction of the k input neighbours among the k map ones
  double t_low = 0, t_high = 0;      // 95% interval of T when sampled; equal to T when exact
  double c_low = 0, c_high = 0;      // 95% interval of C when sampled; equal to C when exact
  double knn_low = 0, knn_high = 0;  // 95% interval of kNN preservation likewise
  std::string interval_method;       // how the intervals were made ("exact": no sampling)
  bool sampled = false;
  std::size_t sample_size = 0;               // number of query points (N when exact)
  std::vector<std::uint32_t> scored_points;  // query rows, ascending
  std::vector<double> t_terms;    // per scored point, its term of 1 - T (see the header comment)
  std::vector<double> c_terms;    // per scored point, its term of 1 - C
  std::vector<double> knn_terms;  // per scored point, the share of its k input neighbours kept
};

struct NeighbourhoodScores {
  std::vector<NeighbourhoodScore> by_k;  // one entry per options.ks, in that order
  // Summary
  std::size_t points = 0;                   // N
  std::size_t queries = 0;                  // query points ranked against all N
  ScoreMethod method = ScoreMethod::exact;  // exact or sampled, as decided
  int threads = 0;                          // threads used
  double seconds = 0;                       // wall time of the stage
  std::vector<std::string> warnings;
};

// input: the original points (N x d); map: the map (N x m), row i of both the same point.
// Throws DataError for different row counts, empty sets or non-finite values (naming the row),
// OptionError for bad options, InterruptedError when `stop` is requested.
NeighbourhoodScores neighbourhood_scores(const PointSet& input, const PointSet& map,
                                         const QualityOptions& options, StopToken stop = {});

namespace detail {
// Fills the estimates and 95% intervals of `s` from its per-point terms (scored_points,
// t_terms, c_terms, knn_terms and sampled set), for N = n points and the sample's seed. The
// last step of neighbourhood_scores, shared with the coverage checks, which draw many samples
// from the terms of one exact run (each sampled point's terms are its exact ones).
void estimate_from_terms(NeighbourhoodScore& s, std::size_t n, std::uint64_t seed);

// neighbourhood_scores, with its faster ways to the same ranks allowed (the default: k-d tree
// counts in a few dimensions, float32 products in many) or not (every distance by the direct
// double scan): both give the same results, which the tests check.
NeighbourhoodScores neighbourhood_scores(const PointSet& input, const PointSet& map,
                                         const QualityOptions& options, bool use_fast,
                                         StopToken stop);
}  // namespace detail

}  // namespace unfurl
