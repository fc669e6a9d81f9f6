#include "engine/memory_estimate.hpp"

#include <algorithm>
#include <cmath>

#include "engine/error.hpp"

namespace unfurl {
namespace {

// Sums in double, saturated when converted back: sizes of 2^64 bytes and more are all "too
// much" alike, and an overflow must never wrap into a small figure that passes a limit.
std::uint64_t bytes_of(double value) {
  if (!(value < 0x1p64)) return UINT64_MAX;
  return static_cast<std::uint64_t>(std::max(0.0, value));
}

}  // namespace

void MemoryShape::validate() const {
  if (points == 0) throw OptionError("MemoryShape.points", "must be at least 1, got 0");
  if (spectral.dims == 0) throw OptionError("SpectralOptions.dims", "must be at least 1, got 0");
  if (!exact && !linear && landmarks == 0)
    throw OptionError("LandmarkOptions.count", "must be at least 1, got 0");
  if (threads == 0) throw OptionError("MemoryShape.threads", "must be at least 1, got 0");
}

std::uint64_t estimated_edges(std::size_t n, std::size_t k) {
  return bytes_of(1.2 * static_cast<double>(n) * static_cast<double>(k));
}

MemoryEstimate estimate_memory(const MemoryShape& s) {
  s.validate();
  const double n = static_cast<double>(s.points), d = static_cast<double>(s.columns);
  const double k = static_cast<double>(s.k), m = static_cast<double>(s.spectral.dims);
  const double t = static_cast<double>(s.threads);
  const bool given = s.columns == 0;
  const double e = static_cast<double>(given ? s.graph_edges : estimated_edges(s.points, s.k));
  const double csr = 8 * (n + e);
  const double base = static_cast<double>(s.baseline) + static_cast<double>(s.held_bytes);
  MemoryEstimate out;
  out.baseline = s.baseline;
  if (s.radius)
    out.notes.push_back(
        "radius graph: its degree is unknown before the search, "
        "estimated as k = " +
        std::to_string(s.k));
  auto add = [&](const char* step, double bytes, std::string largest) {
    out.steps.push_back({step, bytes_of(base + bytes), std::move(largest)});
  };

  const double input = given ? csr + 8 * n : n * (4 * d + 16);
  add("read", input, given ? "the given graph" : "the points");
  if (s.linear) {
    // PCA: the points, their centred double copy and the d x d covariance, the map.
    add("spectral", input + 8 * n * d + 8 * d * d + 4 * n * m, "the centred points (double)");
    out.peak_step = 1;
    out.peak = out.steps[1].bytes;
    return out;
  }

  double kept = input;  // held from here on: the input, the graph, numberings, node points
  if (!given) {
    const double search = 8 * n + (s.scan_search ? 4 * n * d + t * 4 * 512 * 512 : 0);
    const double lists = 16 * n * k + 12 * n * k;  // the kNN lists and the edges drawn from them
    const double build = 12 * n * k + 16 * e + 24 * n + csr;  // edges, CSR entries, the CSR
    add("graph", input + 16 * n + search + std::max(lists, build), "neighbour lists and edges");
    kept = input + csr + 8 * n + 4 * n * d;
  }
  add("order", kept + 2 * csr + 24 * n + 4 * n * d, "graph copies in node order");

  const double l = s.exact ? n : static_cast<double>(s.landmarks);
  const double rows = 4 * l * n;
  const std::string rows_name =
      s.exact ? "N x N geodesic rows (float32)"
              : "landmark rows " + std::to_string(s.landmarks) + " x N (float32)";
  const double graphs = kept + csr;  // the node graph and the ordered one
  add("rows", graphs + rows + 9 * n + t * 12 * n, rows_name);
  const std::size_t order = s.exact ? s.points : s.landmarks;
  add("spectral",
      graphs + rows + static_cast<double>(spectral_solver_bytes(order, s.spectral)) + 12 * n * m,
      rows_name);

  // After the embedding: the input, the map and its input rows, and the rows only when they
  // are kept (--keep-geodesics; else freed once the map is made); the graphs are gone.
  const double after_rows = s.keep_geodesics ? rows : 0.0;
  const double result = input + after_rows + 4 * n * m + 24 * n;
  if (s.score) {
    // During the embedding, 16 rows a batch; a run with a work folder reads the next batch
    // while it correlates one: two batches.
    const double residual = graphs + 128 * n + 4 * n * m;
    const double q = s.score_queries ? static_cast<double>(s.score_queries) : n;
    const double neighbourhoods = result + n * (4 * d + 8) + 12 * n * (d + m) +
                                  q * (8 + 52 * static_cast<double>(s.score_ks));
    add("scores", std::max(residual + after_rows, neighbourhoods), rows_name);
  }
  add("write", result + 12 * n + 4 * n * m + (s.keep_geodesics ? rows : 0.0), rows_name);

  for (std::size_t i = 0; i < out.steps.size(); ++i)
    if (out.steps[i].bytes > out.steps[out.peak_step].bytes) out.peak_step = i;
  out.peak = out.steps[out.peak_step].bytes;
  return out;
}

}  // namespace unfurl
