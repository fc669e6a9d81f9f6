// Intrinsic dimension by maximum likelihood on nearest-neighbour distances (Levina and Bickel,
// "Maximum likelihood estimation of intrinsic dimension", NIPS 2004):
//   m(x) = [ 1/(k-1) sum_{j=1}^{k-1} log(T_k(x) / T_j(x)) ]^-1,
// T_j(x) the distance from x to its j-th nearest neighbour (x itself excluded). Points are
// combined by averaging the inverses 1/m(x) and inverting the mean, the correction proposed by
// MacKay and Ghahramani (2005) to the plain average of m(x) in the paper.
#pragma once

#include <cstddef>
#include <span>
#include <string>
#include <vector>

namespace unfurl {

struct IntrinsicDimension {
  double estimate = 0;                // [mean over used points of 1/m(x)]^-1
  std::size_t k = 0;                  // neighbours per point
  std::string averaging = "inverse";  // how points are combined (see above)
  std::size_t points_used = 0;        // points that entered the mean
  std::size_t points_skipped = 0;     // points with a zero distance among their k (duplicates)
  std::vector<std::string> warnings;
};

// knn_distances: n rows of k distances, row i ascending, the k nearest neighbours of point i
// without i itself (Euclidean, not squared). A point whose nearest distance is 0 has a
// duplicate: log(T_k / 0) is infinite, so such points are skipped and counted, not guarded
// with an arbitrary floor. Throws OptionError ("--k") for k < 2, DataError for a wrong size,
// a negative, non-finite or descending row (named), or when no point can be used.
IntrinsicDimension levina_bickel(std::span<const float> knn_distances, std::size_t n,
                                 std::size_t k);

}  // namespace unfurl
