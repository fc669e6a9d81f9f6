// One extra dataset of a map or graph file: float64 values with their own attributes.
#pragma once

#include <cstddef>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

namespace unfurl::io {

struct MapArray {
  std::string path;               // absolute, e.g. "/quality/trustworthiness"
  std::vector<double> values;     // product(dims) values, row-major
  std::vector<std::size_t> dims;  // empty for a scalar
  nlohmann::json attributes = nlohmann::json::object();  // written on the dataset
};

}  // namespace unfurl::io
