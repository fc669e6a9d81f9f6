// Peak memory of an embedding, step by step, from its dimensions alone: N points of d columns
// (or N nodes and E stored edges of a given graph), k neighbours, L landmarks (N in exact
// mode), m map dimensions and T threads. Pure arithmetic on sizes, so a command can refuse a
// run before reading its input (README, "Long runs: memory estimates").
//
// Each step's figure is everything alive while the step runs: what the run holds from
// before (the points, the graphs kept by earlier steps) plus the step's own arrays at their
// largest. The run's peak is the largest step. In bytes (4 per float32 and NodeId, 8 per
// double, offset and row index), with E the stored (directed) edges, 1.2 N k for a
// union kNN graph (estimated_edges):
//   held      the process (baseline) + the points as read, N (4 d + 16) (values, row keys,
//             input row ids), or a given graph, 8 (N + E) + 8 N
//   graph     k-d tree or scan 8 N (+ 4 N d for the scan's centred copy); kNN lists 16 N k
//             with the edges drawn from them 12 N k, or (the larger) the symmetric CSR
//             build from those edges: 12 N k + 16 E + 24 N + 8 (N + E); duplicates 16 N
//   kept      after the graph: the node graph CSR 8 (N + E), numberings 8 N, node points 4 N d
//   order     two more CSR copies (the component, the ordered graph) 16 (N + E), the curve
//             keys 24 N and the ordered points 4 N d
//   rows      landmark rows 4 L N, two CSRs, maxmin bounds 9 N and T Dijkstra workspaces
//             of 12 N; exact mode: 4 N^2 instead of the landmark rows
//   spectral  the rows, a dense solver 24 L^2 (L <= SpectralOptions.dense_limit) or the
//             Lanczos solver (spectral_solver_bytes), the coordinates 12 N m
//   scores    the rows, the map, its input rows 24 N; residual variance batches of 16 rows
//             (two of 64 N: one read while one is correlated) while the graphs are alive;
//             trustworthiness and continuity: a copy of the points 4 N d + 8 N, both spaces
//             transposed 12 N (d + m), and per query point (Q: N when exact, the sample otherwise)
//             8 + 52 per k of sums and terms
//   write     the rows, the map record: coordinates and rows again, 12 N + 4 N m, and the
//             landmark rows once more (4 L N) when they are stored (keep_geodesics)
// Radius graphs have no k: the estimate takes the default k (10) and says so.
#pragma once

#include <cstddef>
#include <cstdint>
#include <string>
#include <vector>

#include "engine/spectral.hpp"

namespace unfurl {

struct MemoryShape {
  std::size_t points = 0;         // N: input points, or nodes of a given graph
  std::size_t columns = 0;        // d: columns of the points (0 for a given graph)
  std::size_t graph_edges = 0;    // E of a given graph (stored entries, both directions); 0: points
  std::size_t k = 10;             // neighbours per point of the kNN graph
  bool radius = false;            // radius graph: degree unknown before the search, k assumed
  std::size_t landmarks = 256;    // L (ignored in exact mode)
  bool exact = false;             // every node a source: N x N rows
  bool linear = false;            // PCA baseline: no graph, no rows
  SpectralOptions spectral;       // dims (m) and the solver settings
  std::size_t threads = 1;        // T: OpenMP threads (Dijkstra workspaces, scan blocks)
  bool score = true;              // quality scores after the map
  std::size_t score_ks = 1;       // neighbourhood sizes scored (per-point terms each)
  std::size_t score_queries = 0;  // query points of the scores: N when exact, the sample else
  bool scan_search = false;       // the blocked scan instead of the k-d tree
  bool keep_geodesics = false;    // the landmark rows are written into the map as well
  std::uint64_t held_bytes = 0;   // held by the caller for the whole run (demo: its scenario)
  // Fixed bytes of the process before any data: code, libraries, thread stacks, allocator.
  // 22 MiB: `unfurl embed` of 100 points peaked at 23.1 MiB (Release build, 2 threads).
  std::uint64_t baseline = std::uint64_t{22} << 20;
  // Throws OptionError naming the field: no points, no dims, L of 0 outside exact mode.
  void validate() const;
};

struct StepMemory {
  std::string step;     // "read", "graph", "order", "rows", "spectral", "scores", "write"
  std::uint64_t bytes;  // alive while the step runs, the baseline included
  std::string largest;  // its largest array, in words ("landmark rows 256 x N float32")
};

struct MemoryEstimate {
  std::vector<StepMemory> steps;   // in run order
  std::uint64_t peak = 0;          // the largest step's bytes
  std::size_t peak_step = 0;       // index into steps
  std::uint64_t baseline = 0;      // included in every step
  std::vector<std::string> notes;  // assumptions (a radius graph's degree)
  const StepMemory& peak_of() const { return steps.at(peak_step); }
};

// The estimate of a run of this shape (validate() first). Saturates at 2^64 - 1 rather than
// wrapping for absurd sizes.
MemoryEstimate estimate_memory(const MemoryShape& shape);

// Stored CSR entries of a union kNN graph on n points: 1.2 n k, between n k (every pair
// listed both ways) and 2 n k (none); measured 1.14 n k on Swiss rolls of 20,000, 60,000 and
// 150,000 points at k = 10 (common practice, no source).
std::uint64_t estimated_edges(std::size_t n, std::size_t k);

}  // namespace unfurl
