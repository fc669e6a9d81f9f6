// Internal: JSON objects stored as HDF5 attributes, so that h5py and other readers see plain
// typed values while unfurl round-trips the structure.
//
// Writing, for each member of the object:
//   string -> string attribute; integer or bool -> int64; number -> float64;
//   array of numbers (non-empty) -> 1-D int64 (all integers) or float64;
//   object -> a string attribute holding its JSON text, AND one attribute per member named
//             "name.member" by the rules above (nested objects and other arrays as JSON text);
//   null -> not written; any other array -> its JSON text.
// Reading reverses this: a string attribute "name" with "name.*" companions that parses as a
// JSON object comes back as that object (the companions are folded into it). Bools come back
// as integers 0/1 and arrays of non-numbers as their JSON text.
#pragma once

#include <nlohmann/json.hpp>
#include <string>

#include "io/hdf5_file.hpp"

namespace unfurl::io::detail {

void write_json_attributes(H5Writer& out, const std::string& object, const nlohmann::json& attrs);
nlohmann::json read_json_attributes(const H5Reader& in, const std::string& object);

}  // namespace unfurl::io::detail
