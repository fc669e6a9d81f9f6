// The neighbour graph stage: exact k-nearest or radius graphs over a point set, with exact
// duplicate points merged, and a plain exact kNN query for other stages.
//
// Exactness: both back ends report exact Euclidean distances (computed in double from the
// float rows, rounded to float once) and the exact neighbour sets; ties in distance go to the
// smaller index, so the tree and the scan give identical graphs. Results do not depend on
// the thread count. Parallel: k-d tree queries and scan blocks run on all OpenMP threads; the
// k-d tree build is single-threaded (nanoflann 1.4).
#pragma once

#include <cstddef>
#include <memory>
#include <optional>
#include <string>
#include <variant>
#include <vector>

#include "engine/graph.hpp"
#include "engine/points.hpp"
#include "engine/quality_dimension.hpp"
#include "engine/stop.hpp"

namespace unfurl {

enum class Search {
  automatic,  // tree when d <= 16 and N >= 16 * 2^d (k-d trees pay off for N >> 2^d), else scan
  tree,       // k-d tree (nanoflann): low dimension
  scan,       // blocked brute force from float32 matrix products: high dimension
};
const char* search_name(Search search);  // "automatic", "tree", "scan"

// Who is a point's neighbour: exactly one of two rules, so a graph is k-nearest or radius.
struct NearestK {
  std::size_t k = 10;  // neighbours per point, at least 1 and below the number of points
};
struct WithinRadius {
  // Points at Euclidean distance <= radius (inclusive, as SciPy's cKDTree.query_pairs), in
  // data units; positive and finite.
  double radius = 1.0;
};
using Neighbourhood = std::variant<NearestK, WithinRadius>;

struct GraphOptions {
  Neighbourhood neighbourhood = NearestK{};  // k-nearest (k = 10) unless a radius is chosen
  // false: union symmetrisation (i~j when either lists the other); true: mutual (both must).
  bool mutual = false;
  // Which exact search runs (see Search).
  Search search = Search::automatic;
  // false: exact duplicate rows are merged into one node (their zero-length edges would make
  // distinct rows geodesically identical and break shortest-path ties). true: every row is
  // a node and each duplicate is joined to its group's first row by an edge of length
  // duplicate_epsilon; a kNN edge between duplicates also gets that length.
  bool keep_duplicates = false;
  // Length of the edges between kept duplicates, in data units. 0: automatic, 1e-6 times the
  // median non-zero edge length (small against every real edge, yet never zero).
  float duplicate_epsilon = 0.0f;
  // Scan back end: rows per block. Memory: per thread one block of products (block_rows x
  // block_rows floats, or block_rows x 2048 for other queries), a centred copy of the data,
  // and k + max(16, k) candidates of 8 bytes per row; never an N x N matrix.
  std::size_t block_rows = 512;

  // Throws OptionError naming the field: k < 1, k >= number of points, radius not positive
  // or not finite, block_rows < 1, negative or non-finite epsilon.
  void validate(std::size_t points) const;
};

struct GraphSummary {
  std::size_t nodes = 0;           // unique points (or all rows with keep_duplicates)
  std::size_t directed_edges = 0;  // stored CSR entries (twice the undirected edges)
  std::size_t undirected_edges = 0;
  std::size_t degree_min = 0, degree_median = 0, degree_max = 0;
  // Edge length quantiles (nearest rank): min, 5%, 50%, 95%, max; zeros when no edges.
  float length_min = 0, length_p05 = 0, length_median = 0, length_p95 = 0, length_max = 0;
  std::size_t isolated_nodes = 0;     // nodes without any edge (radius graphs, mutual graphs)
  std::size_t duplicate_groups = 0;   // sets of two or more identical rows
  std::size_t duplicate_rows = 0;     // rows beyond the first of each group (merged or kept)
  Search search_used = Search::tree;  // the back end that actually ran
  double seconds = 0.0;               // wall time of the whole stage
  std::vector<std::string> warnings;  // isolated nodes, duplicates, ...
};

struct GraphResult {
  NeighbourGraph graph;                    // over the nodes (unique points by default)
  std::vector<NodeId> node_of_point;       // N input rows -> node (duplicates share one)
  std::vector<std::size_t> point_of_node;  // node -> its representative (first) input row
  // Levina-Bickel from the kNN lists just searched (distinct points, the graph's k), so the
  // scores need no second search; absent for radius graphs, k < 2 or when the lists give no
  // estimate (the reason is then a warning in the summary).
  std::optional<IntrinsicDimension> dimension;
  GraphSummary summary;
};

// Builds the graph. Throws OptionError for bad options, DataError for non-finite values
// (naming row and column), too few distinct points for k, or a radius under which no two
// points are joined (the message gives the smallest nearest-neighbour distance). Isolated
// nodes short of that are a warning; components are the business of engine/components.hpp.
GraphResult build_neighbour_graph(const PointSet& points, const GraphOptions& options,
                                  StopToken stop = {});

// One exact search kept whole, so that the graphs of smaller settings of the same rule come
// from its lists without searching again (engine/sweep.hpp): the k nearest of every distinct
// point at the largest k, or every pair within the largest radius, with the exact squared
// distances. Immutable and cheap to copy (the lists are shared).
namespace detail {
struct SearchLists;
}
class NeighbourSearch {
 public:
  const GraphOptions& options() const;  // as searched: the neighbourhood is the largest setting
  std::size_t points() const;           // input rows
  std::size_t nodes() const;            // distinct points (nodes of every graph derived)
  double seconds() const;               // wall time of the search
  const detail::SearchLists& lists() const { return *lists_; }

 private:
  friend NeighbourSearch search_neighbours(const PointSet&, const GraphOptions&, StopToken);
  std::shared_ptr<const detail::SearchLists> lists_;
};

// The search of build_neighbour_graph at options.neighbourhood, with the same checks and
// errors (bad options, non-finite values, too few distinct points, a radius joining no pair).
NeighbourSearch search_neighbours(const PointSet& points, const GraphOptions& options,
                                  StopToken stop = {});

// The graph of `setting` from a kept search: the k-nearest lists cut to their first k (they
// are ordered by distance, ties to the smaller index, so these are the k nearest), or the
// radius lists cut at the radius (the same inclusive rule on the same exact squared
// distances); then the symmetrisation (union or mutual), duplicate handling and summary of
// build_neighbour_graph, which is this function applied to a search at its own setting. So
// the graph equals a fresh build_neighbour_graph at `setting` edge for edge. `setting` must
// be of the searched rule and no larger (OptionError naming NearestK.k or
// WithinRadius.radius). A radius that joins no pair gives a graph without edges here (the
// sweep reports it), not an error. The summary's seconds are this derivation's.
GraphResult graph_from_search(const NeighbourSearch& search, const Neighbourhood& setting,
                              StopToken stop = {});

// The k nearest data rows of every query row, N_queries x k row-major, nearest first, ties
// to the smaller index.
struct KnnOptions {
  std::size_t k = 10;                 // neighbours per query row
  Search search = Search::automatic;  // which exact search runs
  // The queries are the data themselves (same rows, same order) and row i never lists
  // itself, though it lists its exact duplicates at distance 0.
  bool exclude_self = false;
  std::size_t block_rows = 512;  // scan back end: rows per block (see GraphOptions)
  // Throws OptionError naming the field: k < 1 or k > available (the data rows, less one
  // with exclude_self), block_rows < 1.
  void validate(std::size_t available) const;
};
struct KnnSummary {
  std::size_t queries = 0;            // query rows answered
  Search search_used = Search::tree;  // the back end that ran
};
struct KnnResult {
  std::size_t k = 0;
  std::vector<NodeId> index;    // queries.rows * k data row ids
  std::vector<float> distance;  // queries.rows * k Euclidean distances
  KnnSummary summary;
};
KnnResult exact_knn(const PointSet& data, const PointSet& queries, const KnnOptions& options,
                    StopToken stop = {});

// The back end Search::automatic picks for n points in d dimensions.
Search choose_search(Search requested, std::size_t n, std::size_t d);

}  // namespace unfurl
