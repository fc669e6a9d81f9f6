// The fitted preprocessing (engine/preprocess.hpp) as datasets of a map file under
// /preprocess, and the column centres the point reader subtracted (/input/centres), and back,
// so that `unfurl score` sees the points as `embed` saw them.
#pragma once

#include <optional>
#include <vector>

#include "engine/preprocess.hpp"
#include "io/map_array.hpp"

namespace unfurl::app {

void add_preprocess_arrays(const PreprocessModel& model, std::vector<io::MapArray>& out);

// The model stored in a map's extras, or nothing when the map was made without one.
// DataError naming the dataset when the stored arrays disagree in size.
std::optional<PreprocessModel> preprocess_from_arrays(const std::vector<io::MapArray>& arrays);

// /input/centres: the per-column centres subtracted in double before narrowing to float32
// (io/points_reader.hpp). Nothing is added for an empty list (a given graph).
void add_input_centres(const std::vector<double>& centres, std::vector<io::MapArray>& out);

// The centres a map records, or nothing for a map made before they were recorded.
std::optional<std::vector<double>> input_centres_from_arrays(
    const std::vector<io::MapArray>& arrays);

}  // namespace unfurl::app
