// What a map keeps for placing new points (engine/placement.hpp), beside the rest of the map
// layout (io/map_file.hpp), and how it is read back.
//
//   /placement/triangulation          dims x L float64  P: row k = v_k / sqrt(lambda_k)
//   /placement/landmark_mean_squared  L float64         each landmark's mean squared geodesic
//                                                       distance to the landmarks (mu)
//
// Placement also reads, from the map's own layout: /landmarks/geodesic and /landmarks/nodes
// (the L x N rows), /rows (the reference points as input rows), /preprocess/* and
// /input/centres (the preprocessing), and the attributes "input" (path and identity of the
// reference points) and "parameters" (the neighbour search: k, search, metric, scale).
#pragma once

#include <filesystem>
#include <vector>

#include "engine/placement.hpp"
#include "engine/stop.hpp"
#include "io/map_array.hpp"

namespace unfurl::io {

// Appends /placement/* to a map's extras (write_map writes them).
void add_placement_arrays(const Triangulation& triangulation, std::vector<MapArray>& extras);

// Whether `map` holds every dataset placement needs.
bool has_placement_record(const std::filesystem::path& map);

struct PlacementRecord {
  Triangulation triangulation;
  LandmarkColumns columns;  // /landmarks/geodesic node by node
};

// Reads /placement/* and the landmark geodesic rows of a map of `map_rows` rows and `dims`
// axes, transposing the rows block by block (no second L x N copy). MissingInputError
// naming the dataset when one is absent; DataError when the sizes disagree; errors of
// io/hdf5_file.hpp otherwise.
PlacementRecord read_placement_record(const std::filesystem::path& map, std::size_t map_rows,
                                      std::size_t dims, StopToken stop = {});

}  // namespace unfurl::io
