// The map file: one HDF5 file holding an unfolded map and everything needed to judge and
// reuse it. Layout (format version 1):
//
//   /coords              N x m float32  the map, rows in input order
//   /rows                N int64        input row index of each map row (after drops)
//   /landmarks/rows      L int64        input row index of each landmark
//   /landmarks/coords    L x m float64  the landmarks' coordinates
//   /landmarks/geodesic  L x N float32  geodesic distances landmark -> map row (optional)
//   /landmarks/nodes     L uint32       map row (graph node) each geodesic row starts from,
//                                       present with /landmarks/geodesic
//   /spectrum            float64        computed eigenvalues of B (the landmark Gram matrix, or
//                                       all points' in exact mode), descending; attributes say
//                                       which: which = "all" (the whole spectrum) or "largest"
//                                       (the largest `count` of `order`), the whole spectrum's
//                                       masses (mass_method exact | estimated, positive_mass,
//                                       negative_mass, negative_ratio and its standard error),
//                                       noise_floor and noise_axes (see apps/report.cpp)
//   /quality/*, /graph/*, other paths   extras: float64 datasets (scalars or arrays), each
//                                       with its own attributes (k, method, sample size, ...)
//   /graph/offsets, targets, lengths, rows, nodes/*   a full graph (io/graph_file.hpp), if
//                                       saved here: read_graph reads it; read_map skips it
//   attributes on /      format_version (int), program_version, creation_time (UTC ISO
//                        8601), host, peak_memory_bytes, and whatever the caller passes
//                        (input identity, parameters, seed, stage times), stored by the
//                        rules of io/detail/h5_json.hpp: an object such as "parameters" is
//                        one JSON string attribute plus one attribute per member
//                        ("parameters.k").
//
// Datasets are contiguous and uncompressed unless the writer is asked to deflate the large
// ones (above 4 MiB): in one measured run deflate level 1 took 20 times the wall time of a
// contiguous map write for a file 15% smaller (bench/RESULTS.md, io-maps). Readers need
// nothing special either way.
#pragma once

#include <cstdint>
#include <filesystem>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <vector>

#include "engine/distance_rows.hpp"
#include "engine/points.hpp"
#include "io/atomic_output.hpp"
#include "io/hdf5_file.hpp"
#include "io/map_array.hpp"

namespace unfurl::io {

// The newest map layout this build writes and the newest it reads.
inline constexpr std::int64_t map_format_version = 1;

struct MapContents {
  PointSet coords;                                                // N x m map coordinates
  std::vector<std::int64_t> rows;                                 // N input row indices
  std::vector<std::int64_t> landmark_rows;                        // L input row indices
  std::vector<double> landmark_coords;                            // L x m, row-major
  std::optional<DistanceRows> landmark_geodesic;                  // L x N, sources = map rows
  std::vector<double> spectrum;                                   // descending eigenvalues
  nlohmann::json spectrum_attributes = nlohmann::json::object();  // on /spectrum
  std::vector<MapArray> extras;                          // quality, graph summary, per-point terms
  nlohmann::json attributes = nlohmann::json::object();  // attributes on "/"
};

// Writes atomically: the file appears whole at `path` or not at all, and an existing file
// there is untouched on failure. Adds format_version, program_version and, unless given,
// creation_time, host and peak_memory_bytes to the attributes. Throws OutputError when the
// output cannot be created, IoError when writing fails, InternalError when the contents
// disagree in size (a caller's bug).
// `large` is the layout of datasets above 4 MiB (default contiguous).
void write_map(const std::filesystem::path& path, const MapContents& contents,
               H5WriteOptions large = {});
// The same into output `output` of `outputs`, committed with the rest of the set.
void write_map(OutputSet& outputs, std::size_t output, const MapContents& contents,
               H5WriteOptions large = {});

// Reads a map file; the geodesic rows (often the largest part) only when asked. Rejects a
// newer format version and a file without /coords or /rows; checks every size against N, m
// and L. Errors as described in io/hdf5_file.hpp.
MapContents read_map(const std::filesystem::path& path, bool with_geodesic = false);

// The identity of an input file for the map's attributes: {"path", "dataset", "bytes",
// "modified" (UTC ISO 8601)}. Throws MissingInputError when the file does not exist.
nlohmann::json input_identity(const std::filesystem::path& file, const std::string& dataset);

// Now in UTC, ISO 8601 to the second ("2026-12-01T17:39:56Z").
std::string utc_now_iso8601();

}  // namespace unfurl::io
