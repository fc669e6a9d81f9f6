#include "io/graph_file.hpp"

#include <algorithm>
#include <cmath>
#include <limits>

#include "engine/error.hpp"
#include "io/atomic_output.hpp"
#include "io/detail/file_stamp.hpp"
#include "io/detail/h5_json.hpp"
#include "io/detail/map_array_io.hpp"
#include "io/hdf5_file.hpp"

namespace unfurl::io {
namespace {

namespace fs = std::filesystem;

constexpr const char* nodes_group = "/graph/nodes/";

std::string node_text(std::size_t i) {
  return "node " + std::to_string(i);
}

}  // namespace

void validate_graph(const NeighbourGraph& g, const std::string& where) {
  const auto fail = [&](const std::string& dataset, const std::string& what) {
    throw DataError(where + ": " + dataset + ": " + what);
  };
  if (g.offsets.empty()) fail("/graph/offsets", "is empty (needs N+1 entries)");
  const std::size_t n = g.nodes();
  if (n >= (std::size_t{1} << 31)) fail("/graph/offsets", "more than 2^31 - 1 nodes");
  if (g.offsets[0] != 0) fail("/graph/offsets", "does not start at 0");
  for (std::size_t i = 0; i < n; ++i)
    if (g.offsets[i + 1] < g.offsets[i])
      fail("/graph/offsets", "decreases at " + node_text(i) + " (" + std::to_string(g.offsets[i]) +
                                 " then " + std::to_string(g.offsets[i + 1]) + ")");
  if (static_cast<std::uint64_t>(g.offsets.back()) != g.targets.size())
    fail("/graph/offsets", "ends at " + std::to_string(g.offsets.back()) +
                               " but /graph/targets has " + std::to_string(g.targets.size()) +
                               " entries");
  if (g.lengths.size() != g.targets.size())
    fail("/graph/lengths", "has " + std::to_string(g.lengths.size()) + " entries, /graph/targets " +
                               std::to_string(g.targets.size()));
  for (std::size_t i = 0; i < n; ++i) {
    for (auto e = g.offsets[i]; e < g.offsets[i + 1]; ++e) {
      const auto k = static_cast<std::size_t>(e);
      if (g.targets[k] >= n)
        fail("/graph/targets", node_text(i) + " has neighbour " + std::to_string(g.targets[k]) +
                                   ", not below N = " + std::to_string(n));
      if (e > g.offsets[i] && g.targets[k] <= g.targets[k - 1])
        fail("/graph/targets", node_text(i) + ": neighbours not sorted or repeated at " +
                                   std::to_string(g.targets[k]));
      const float len = g.lengths[k];
      if (!std::isfinite(len) || len < 0.0f)
        fail("/graph/lengths", "edge " + std::to_string(i) + " -> " + std::to_string(g.targets[k]) +
                                   " has length " + std::to_string(len) +
                                   " (must be finite and >= 0)");
    }
  }
  // Both directions stored with the same length (targets are sorted, so binary search).
  for (std::size_t i = 0; i < n; ++i) {
    for (auto e = g.offsets[i]; e < g.offsets[i + 1]; ++e) {
      const NodeId j = g.targets[static_cast<std::size_t>(e)];
      const auto begin = g.targets.begin() + g.offsets[j];
      const auto end = g.targets.begin() + g.offsets[j + 1];
      const auto back = std::lower_bound(begin, end, static_cast<NodeId>(i));
      if (back == end || *back != i)
        fail("/graph/targets",
             "edge " + std::to_string(i) + " -> " + std::to_string(j) + " has no reverse edge");
      const float there = g.lengths[static_cast<std::size_t>(e)];
      const float here = g.lengths[static_cast<std::size_t>(back - g.targets.begin())];
      if (there != here)
        fail("/graph/lengths", "edge " + std::to_string(i) + " -> " + std::to_string(j) +
                                   " has length " + std::to_string(there) + " one way and " +
                                   std::to_string(here) + " the other");
    }
  }
}

void write_graph(const fs::path& path, const NeighbourGraph& g, const nlohmann::json& attributes,
                 const std::vector<std::int64_t>& rows, const std::vector<MapArray>& node_arrays,
                 H5WriteOptions large) {
  OutputSet outputs;
  write_graph(outputs, outputs.add(path), g, attributes, rows, node_arrays, large);
  outputs.commit();
}

void write_graph(OutputSet& outputs, std::size_t output, const NeighbourGraph& g,
                 const nlohmann::json& attributes, const std::vector<std::int64_t>& rows,
                 const std::vector<MapArray>& node_arrays, H5WriteOptions large) {
  const fs::path& path = outputs.path(output);
  const std::size_t n = g.nodes();
  const auto bug = [&](const std::string& what) {
    throw InternalError(path.string() + ": graph contents disagree: " + what);
  };
  if (g.offsets.empty()) bug("offsets must have N+1 entries");
  if (static_cast<std::uint64_t>(g.offsets.back()) != g.targets.size() ||
      g.lengths.size() != g.targets.size())
    bug("offsets, targets and lengths do not match");
  if (!rows.empty() && rows.size() != n) bug("rows must have one entry per node");
  for (const MapArray& a : node_arrays)
    if (a.path.rfind(nodes_group, 0) != 0 || a.dims.empty() || a.dims[0] != n)
      bug("node array " + a.path + " must sit under /graph/nodes/ with N rows");

  outputs.write(output, [&](const fs::path& temp) {
    H5Writer out(temp);
    out.write("/graph/offsets", g.offsets, {g.offsets.size()},
              detail::layout_for_bytes(g.offsets.size() * 8, large));
    out.write("/graph/targets", g.targets, {g.targets.size()},
              detail::layout_for_bytes(g.targets.size() * 4, large));
    out.write("/graph/lengths", g.lengths, {g.lengths.size()},
              detail::layout_for_bytes(g.lengths.size() * 4, large));
    if (!rows.empty()) out.write("/graph/rows", rows, {n}, detail::layout_for_bytes(n * 8, large));
    for (const MapArray& a : node_arrays) {
      detail::write_map_array(out, a, large);
    }
    detail::write_json_attributes(out, "/graph", attributes);
    detail::write_json_attributes(
        out, "/", detail::stamp_attributes(nlohmann::json::object(), graph_format_version));
    out.close();
  });
}

GraphFile read_graph(const fs::path& path) {
  H5Reader in(path);
  detail::check_format_version(in, graph_format_version, "graph file");
  GraphFile out;
  for (const char* name : {"/graph/offsets", "/graph/targets", "/graph/lengths"})
    in.require_rank(name, 1);
  out.graph.offsets = in.read<std::int64_t>("/graph/offsets");
  out.graph.targets = in.read<NodeId>("/graph/targets");
  out.graph.lengths = in.read<float>("/graph/lengths");
  validate_graph(out.graph, path.string());
  const std::size_t n = out.graph.nodes();
  if (in.has("/graph/rows")) {
    in.require_rank("/graph/rows", 1);
    out.rows = in.read<std::int64_t>("/graph/rows");
    if (out.rows.size() != n)
      throw DataError(path.string() + ": /graph/rows: has " + std::to_string(out.rows.size()) +
                      " entries, expected one per node (" + std::to_string(n) + ")");
  }
  for (const std::string& name : in.datasets_under("/graph/nodes")) {
    MapArray a;
    a.path = name;
    a.dims = in.info(name).dims;
    if (a.dims.empty() || a.dims[0] != n)
      throw DataError(path.string() + ": " + name +
                      ": first dimension is not N = " + std::to_string(n));
    a.values = in.read<double>(name);
    a.attributes = detail::read_json_attributes(in, name);
    out.node_arrays.push_back(std::move(a));
  }
  out.attributes = detail::read_json_attributes(in, "/graph");
  return out;
}

}  // namespace unfurl::io
