// Readers for graphs given directly instead of computed from points. They return raw arrays;
// the engine builds the CSR graph from them (engine/graph_build). Every error names the file
// and the line, edge or matrix entry at fault.
//
// Edge list: one undirected edge per line or entry, (i, j, length).
//   CSV: three fields per line, read by the delimited-text reader of the point sets
//   (io/detail/text_lines.hpp: delimiter sniffed from the first content line, '#' comments,
//   blank lines, byte order mark, number parsing and refusals alike); one header line
//   (first field not a number) is allowed before the first edge. Node ids are 0-based
//   integers (written as "12" or "12.0"). The node count (largest id + 1) is checked against
//   this machine's memory before anything is allocated for it (ResourceError: renumber).
//   HDF5: three 1-D datasets of E entries (default /edges/i, /edges/j, /edges/length), or
//   one E x 3 dataset (table_dataset); integer or floating-point storage.
//   Checked: lengths finite and >= 0; ids integral, >= 0, below the node count (when given)
//   and below 2^31 - 1; every line has three fields. Self loops: one of length 0 carries no
//   information and is dropped (counted in dropped_self_loops); one of length > 0 is an
//   error (a point cannot be away from itself). Repeated edges are passed on as they are.
//
// Partial distance matrix: N x N, from HDF5 (dataset), CSV (N lines of N fields) or NPY
// (the point sets' NPY reader, io/detail/npy_array.hpp: any float or integer type, either
// byte order, C or Fortran order). Missing entries are NaN (in CSV also an empty field) or a
// given sentinel value; they come back as NaN. Checked: square; entries finite and >= 0
// unless missing; diagonal 0 (a missing diagonal entry is taken as 0); symmetric within a
// relative tolerance (a pair present on one side only is asymmetric). Pairs within the
// tolerance both take the upper-triangle value so that the matrix returned is symmetric.
#pragma once

#include <cstddef>
#include <filesystem>
#include <optional>
#include <string>
#include <vector>

#include "engine/points.hpp"
#include "engine/stop.hpp"

namespace unfurl::io {

enum class GraphInputFormat {
  automatic,  // by the file's signature (HDF5, NPY), else by extension: .h5 .hdf5 .he5 ->
              // hdf5, .npy -> npy, anything else -> csv
  csv,
  hdf5,
  npy,  // distance matrices only
};

struct EdgeListOptions {
  GraphInputFormat format = GraphInputFormat::automatic;  // how to read the file
  std::size_t nodes = 0;                                  // node count; 0: the largest id + 1
  std::string i_dataset = "/edges/i";                     // HDF5: first node of each edge
  std::string j_dataset = "/edges/j";                     // HDF5: second node of each edge
  std::string length_dataset = "/edges/length";           // HDF5: length of each edge
  std::string table_dataset;  // HDF5: one E x 3 dataset (i, j, length) instead; empty: unused
  StopToken stop;             // polled every 2^20 lines or edges; default: never stops
  void validate() const;      // throws OptionError naming the field
};

struct EdgeList {
  std::size_t nodes = 0;
  std::vector<NodeId> from, to;
  std::vector<float> length;
  std::size_t dropped_self_loops = 0;  // zero-length self loops skipped
};

EdgeList read_edge_list(const std::filesystem::path& path, const EdgeListOptions& options = {});

struct DistanceMatrixOptions {
  GraphInputFormat format = GraphInputFormat::automatic;  // how to read the file
  std::string dataset = "/distances";                     // HDF5: the N x N dataset
  std::optional<double> missing_value;  // a value marking a missing entry, besides NaN
  double symmetry_tolerance = 1e-6;     // largest |d_ij - d_ji| / max(d_ij, d_ji) accepted
  StopToken stop;                       // polled every 256 matrix rows; default: never stops
  void validate() const;                // throws OptionError naming the field
};

struct PartialDistances {
  std::size_t n = 0;
  std::vector<float> values;      // n x n, row-major, NaN where missing, symmetric
  std::size_t missing_pairs = 0;  // unordered pairs i < j without a distance
};

PartialDistances read_partial_distances(const std::filesystem::path& path,
                                        const DistanceMatrixOptions& options = {});

}  // namespace unfurl::io
