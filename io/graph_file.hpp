// The graph file: a neighbour graph saved for reuse (`unfurl graph`), in HDF5:
//
//   /graph/offsets   N+1 int64    CSR row offsets, offsets[0] == 0
//   /graph/targets   E uint32     neighbour ids, sorted within each node
//   /graph/lengths   E float32    edge lengths, finite and >= 0
//   /graph/rows      N int64      input row of each node (optional)
//   /graph/nodes/*   N x ... float64  other per-node arrays (optional), with attributes
//   attributes on /graph   the caller's parameters and summary (io/detail/h5_json.hpp rules)
//   attributes on /        format_version, program_version, creation_time, host,
//                          peak_memory_bytes
//
// The same /graph/* layout may sit inside a map file. The reader validates the graph against
// the conventions of engine/graph.hpp (monotone offsets, ids below N, finite non-negative
// lengths, sorted targets, every edge stored in both directions with the same length) and
// names the dataset and node at fault in a DataError.
#pragma once

#include <cstdint>
#include <filesystem>
#include <nlohmann/json.hpp>
#include <vector>

#include "engine/graph.hpp"
#include "io/atomic_output.hpp"
#include "io/hdf5_file.hpp"
#include "io/map_array.hpp"

namespace unfurl::io {

inline constexpr std::int64_t graph_format_version = 1;

struct GraphFile {
  NeighbourGraph graph;
  std::vector<std::int64_t> rows;     // input row of each node; empty when not stored
  std::vector<MapArray> node_arrays;  // paths under /graph/nodes/, first dimension N
  nlohmann::json attributes = nlohmann::json::object();  // attributes of /graph
};

// Writes atomically (see io/atomic_output.hpp). `rows` is empty or has one entry per node;
// each node array has N as its first dimension and a path under /graph/nodes/. `large` is
// the layout of datasets above 4 MiB (default contiguous). Sizes that
// disagree are a caller's bug (InternalError); an unwritable output is an OutputError.
void write_graph(const std::filesystem::path& path, const NeighbourGraph& graph,
                 const nlohmann::json& attributes, const std::vector<std::int64_t>& rows = {},
                 const std::vector<MapArray>& node_arrays = {}, H5WriteOptions large = {});
// The same into output `output` of `outputs`, committed with the rest of the set.
void write_graph(OutputSet& outputs, std::size_t output, const NeighbourGraph& graph,
                 const nlohmann::json& attributes, const std::vector<std::int64_t>& rows = {},
                 const std::vector<MapArray>& node_arrays = {}, H5WriteOptions large = {});

// Reads and validates a graph file (or the /graph part of a map file that holds one).
GraphFile read_graph(const std::filesystem::path& path);

// The checks read_graph applies, for graphs from elsewhere; `where` prefixes messages.
void validate_graph(const NeighbourGraph& graph, const std::string& where);

}  // namespace unfurl::io
