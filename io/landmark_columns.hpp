// A map's landmark geodesic rows (/landmarks/geodesic, L x N float32) read node by node for
// placing new points (engine/placement.hpp). The rest of what placement needs is in the map
// record (io/map_record.hpp: /placement, /preprocess, /input).
#pragma once

#include <filesystem>

#include "engine/placement.hpp"
#include "engine/stop.hpp"

namespace unfurl::io {

// Whether `map` keeps the landmark rows (/landmarks/geodesic and /landmarks/nodes).
bool has_landmark_rows(const std::filesystem::path& map);

// Reads /landmarks/geodesic of a map of `map_rows` rows and `landmarks` landmarks, transposing
// it block by block (no second L x N copy). MissingInputError naming the dataset when it is
// absent; DataError when its sizes disagree or it holds a negative, infinite or NaN distance;
// errors of io/hdf5_file.hpp otherwise.
LandmarkColumns read_landmark_columns(const std::filesystem::path& map, std::size_t map_rows,
                                      std::size_t landmarks, StopToken stop = {});

}  // namespace unfurl::io
