// The map file's record: everything one map file holds, as io/map_file.hpp writes and reads
// it in full. This comment is the one description of the layout (README's "The map file"
// repeats it for users). Layout, format version 2:
//
//   /coords                  N x m float32  the map, rows in input order
//   /rows                    N int64        input row of each map row (after drops)
//   /landmarks/rows          L int64        input row of each landmark
//   /landmarks/coords        L x m float64  the landmarks' coordinates
//   /landmarks/geodesic      L x N float32  geodesic distances landmark -> map row (optional)
//   /landmarks/nodes         L uint32       map row each geodesic row starts from (with the
//                                           above)
//   /spectrum                float64        computed eigenvalues of B, descending; attributes
//                                           as MapContents::spectrum_attributes
//   /graph/degree            3 int64        min, median, max degree        } absent for a
//   /graph/edge_length       5 float64      min, 5%, median, 95%, max      } given graph
//   /graph/component_sizes   C int64        largest first
//   /graph/dropped_rows      D int64        input rows outside the embedded component
//   /graph/bridge_rows       B x 2 int64    input rows each added edge joins  } when bridged
//   /graph/bridge_lengths    B float64      their lengths                     }
//   /quality/kK/trustworthiness, continuity, knn_preservation   scalar float64, attributes
//                                           k, method, sample_size, interval_method,
//                                           interval_95 (2 float64)
//   /quality/kK/scored_rows  S int64        map row of each per-point term
//   /quality/kK/trustworthiness_terms, continuity_terms   S float64
//   /quality/residual_variance    m float64 attributes pairs, sampled, drawn, standard_error
//   /quality/intrinsic_dimension  scalar float64, attributes k, method, averaging, points,
//                                 points_used
//   /quality/axis_share      m float64      attributes basis, noise_axes, standard_error
//   /quality/short_circuit_rows     S x 2 int64    input rows of each listed short-circuit
//                                  suspect, worst first (engine/short_circuit.hpp); attributes
//                                  suspects (all, listed or not), long_edges, undecided, edges,
//                                  length_factor, detour_factor
//   /quality/short_circuit_figures  S x 5 float64  length, scale_from, scale_to, detour
//                                  (+inf: not found), detour_bound (+inf: no other path)
//   /preprocess/centre, spread     d float64      attributes on each /preprocess dataset:
//   /preprocess/pca_mean           d float64      scale, metric, components, variance_kept
//   /preprocess/axes               p x d float64  (the last three when components p > 0)
//   /preprocess/variances          p float64
//   /input/centres           d float64      column centres the reader subtracted (optional)
//   /input/dropped_nonfinite_rows  int64    input rows dropped for NaN or infinite values
//   /placement/triangulation   m x L float64  P, row k = v_k / sqrt(lambda_k)  } with the
//   /placement/landmark_mean_squared  L float64  mu: each landmark's mean      } geodesic
//                              squared geodesic distance to the landmarks      } rows
//   /placement/nearest_ratio   N float32    nearest reference point's distance over the
//                                           typical neighbour distance     } in a map `place`
//   /placement/far_rows        F int64      input rows flagged far from    } wrote; attributes
//                                           the map                        } typical_distance,
//                                                                          } far_ratio on both
//   /graph/offsets, targets, lengths, rows, nodes/*   a full graph (io/graph_file.hpp) when
//                                           one is saved here: read_graph's, not the record's
//   attributes on /  format_version (2), program_version, creation_time (UTC ISO 8601), host,
//                    peak_memory_bytes, and the caller's (command, input identity, parameters,
//                    seed, seconds) by the rules of io/detail/h5_json.hpp.
// Most datasets also carry a "meaning" attribute in words. Row ids are int64 everywhere.
//
// Placing new points (`unfurl place`, engine/placement.hpp) reads /placement/triangulation and
// /placement/landmark_mean_squared with /landmarks/geodesic and /landmarks/nodes (the latter
// column block by column block: io/landmark_columns.hpp), /rows, /preprocess/*, /input/centres
// and the attributes "input" (path and identity of the reference points) and "parameters"
// (the neighbour search: k, search, metric, scale).
//
// Version 1 (read, never written) differs only in types: /graph/dropped_rows,
// /graph/component_sizes, /graph/degree, /quality/kK/scored_rows and
// /input/dropped_nonfinite_rows are float64, and the bridges are one B x 3 float64 dataset
// /graph/bridges (from row, to row, length). The reader converts them (refusing a value that
// is not a whole number >= 0): io/detail/map_groups.cpp, read_ids and read_bridges.
// Version-1 writers also counted dropped rows and bridge ends among the rows read rather than
// input-file rows (different with --rows or dropped non-finite rows); they are read as stored.
//
// Extending the record: add a field (or a small struct) here with its default meaning "not
// stored", its datasets to the layout above, and its write and read to io/detail/map_groups.cpp
// (a group of its own gets its own pair of functions there). A map without the new datasets
// must still read (the field stays at its default); a change of meaning or type of an existing
// dataset bumps map_format_version and adds its conversion beside read_ids.
#pragma once

#include <array>
#include <cstdint>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <vector>

#include "engine/distance_rows.hpp"
#include "engine/placement.hpp"
#include "engine/points.hpp"
#include "engine/preprocess.hpp"
#include "io/map_array.hpp"

namespace unfurl::io {

// /graph: the neighbour graph's summary and what the component choice did.
struct MapGraphRecord {
  struct Bridge {
    std::int64_t from_row = 0, to_row = 0;  // input rows
    double length = 0;
    bool operator==(const Bridge&) const = default;
  };
  std::optional<std::array<std::int64_t, 3>> degree;  // min, median, max
  std::optional<std::array<double, 5>> edge_length;   // min, 5%, median, 95%, max
  std::vector<std::int64_t> component_sizes;          // largest first
  std::vector<std::int64_t> dropped_rows;             // input rows left out
  std::vector<Bridge> bridges;                        // edges added to connect
  bool operator==(const MapGraphRecord&) const = default;
};

// /quality/kK: the scores at one neighbourhood size.
struct MapScoreRecord {
  std::int64_t k = 0;
  double trustworthiness = 0, continuity = 0, knn_preservation = 0;
  std::array<double, 2> trustworthiness_95{}, continuity_95{}, knn_preservation_95{};
  std::string method;  // "exact" or "sampled"
  std::int64_t sample_size = 0;
  std::string interval_method;
  std::vector<std::int64_t> scored_rows;  // map rows of the per-point terms
  std::vector<double> trustworthiness_terms, continuity_terms;
  bool operator==(const MapScoreRecord&) const = default;
};

struct MapResidualRecord {  // /quality/residual_variance
  std::vector<double> by_dims, standard_error;
  std::int64_t pairs = 0;
  bool sampled = false;
  std::string drawn;
  bool operator==(const MapResidualRecord&) const = default;
};

struct MapDimensionRecord {  // /quality/intrinsic_dimension
  double estimate = 0;
  std::int64_t k = 0;
  std::string method, averaging;
  std::string points;  // which points entered ("distinct")
  std::int64_t points_used = 0;
  bool operator==(const MapDimensionRecord&) const = default;
};

struct MapAxisShareRecord {  // /quality/axis_share
  std::vector<double> share, standard_error;
  std::string basis;
  std::vector<std::int64_t> noise_axes;
  bool operator==(const MapAxisShareRecord&) const = default;
};

// /quality/short_circuit_*: the graph's short-circuit suspects (absent: not checked).
struct MapShortCircuitRecord {
  struct Suspect {
    std::int64_t from_row = 0, to_row = 0;  // input rows
    double length = 0, scale_from = 0, scale_to = 0;
    double detour = 0;        // +inf: the search did not reach the other end
    double detour_bound = 0;  // the detour is at least this; +inf: no other path
    bool operator==(const Suspect&) const = default;
  };
  std::vector<Suspect> worst;  // worst first
  std::int64_t suspects = 0, long_edges = 0, undecided = 0, edges = 0;
  double length_factor = 0, detour_factor = 0;
  bool operator==(const MapShortCircuitRecord&) const = default;
};

struct MapQualityRecord {
  std::vector<MapScoreRecord> by_k;  // ascending k when read
  std::optional<MapResidualRecord> residual;
  std::optional<MapDimensionRecord> dimension;
  std::optional<MapAxisShareRecord> axis_share;
  std::optional<MapShortCircuitRecord> short_circuits;
  bool operator==(const MapQualityRecord&) const = default;
};

// /input: what the point reader did before the run.
struct MapInputRecord {
  std::optional<std::vector<double>> centres;  // absent: not recorded (a given graph)
  std::vector<std::int64_t> dropped_nonfinite_rows;
  bool operator==(const MapInputRecord&) const = default;
};

// /placement: what placing new points needs besides the landmark rows, and what placing did.
struct MapPlacedRecord {               // a map written by `unfurl place`
  std::vector<float> nearest_ratio;    // per map row
  std::vector<std::int64_t> far_rows;  // input rows beyond far_ratio
  double typical_distance = 0;         // the reference map's typical neighbour distance
  double far_ratio = 0;                // the threshold, in typical distances
  bool operator==(const MapPlacedRecord&) const = default;
};

struct MapPlacementRecord {
  std::optional<Triangulation> triangulation;  // m x L; with the landmark rows (embed)
  std::optional<MapPlacedRecord> placed;
  bool operator==(const MapPlacementRecord&) const = default;
};

struct MapContents {
  PointSet coords;                                                // N x m map coordinates
  std::vector<std::int64_t> rows;                                 // N input row indices
  std::vector<std::int64_t> landmark_rows;                        // L input row indices
  std::vector<double> landmark_coords;                            // L x m, row-major
  std::optional<DistanceRows> landmark_geodesic;                  // L x N, sources = map rows
  std::vector<double> spectrum;                                   // descending eigenvalues
  nlohmann::json spectrum_attributes = nlohmann::json::object();  // on /spectrum
  std::optional<MapGraphRecord> graph;                            // absent for a linear map
  MapQualityRecord quality;                                       // empty with --no-score
  std::optional<PreprocessModel> preprocess;                      // warnings are not stored
  MapInputRecord input;
  std::optional<MapPlacementRecord> placement;  // absent: neither of the two
  // Datasets no field above describes (none that unfurl writes), read as float64 so that a
  // map from a newer minor layout keeps them; written back as they are.
  std::vector<MapArray> extras;
  nlohmann::json attributes = nlohmann::json::object();  // attributes on "/"
};

}  // namespace unfurl::io
