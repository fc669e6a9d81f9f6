// Internal: picking the reader of a graph input from its options and file name.
#pragma once

#include <algorithm>
#include <cctype>
#include <filesystem>
#include <string>

#include "io/detail/point_formats.hpp"
#include "io/graph_input.hpp"

namespace unfurl::io::detail {

// The format asked for, else the one the file's signature names, else the extension's.
inline GraphInputFormat resolve_format(GraphInputFormat asked, const std::filesystem::path& p) {
  if (asked != GraphInputFormat::automatic) return asked;
  const std::string by_content = format_by_signature(p);
  if (by_content == "hdf5") return GraphInputFormat::hdf5;
  if (by_content == "npy") return GraphInputFormat::npy;
  std::string ext = p.extension().string();
  std::transform(ext.begin(), ext.end(), ext.begin(),
                 [](unsigned char c) { return static_cast<char>(std::tolower(c)); });
  if (ext == ".h5" || ext == ".hdf5" || ext == ".he5") return GraphInputFormat::hdf5;
  if (ext == ".npy") return GraphInputFormat::npy;
  return GraphInputFormat::csv;
}

}  // namespace unfurl::io::detail
