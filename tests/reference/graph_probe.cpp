// Exposes the neighbour graph stage to tests/reference/graph_check.py. Files are raw
// little-endian: a point file is uint64 rows, uint64 cols, then rows*cols float32.
//   graph_probe knn POINTS K tree|scan OUT         OUT: uint64 n, uint64 k, n*k uint32, n*k float32
//   graph_probe radius POINTS R tree|scan OUT      OUT: uint64 m, then m pairs of uint32 (i < j)
//   graph_probe union POINTS K tree|scan OUT       OUT: as radius, plus m float32 lengths
//   graph_probe components EDGES NODES OUT         EDGES: uint64 m, m uint32 from, m uint32 to
//                                                  OUT: uint64 count, NODES uint32 labels
//   graph_probe preprocess POINTS none|standard|robust euclidean|cosine PCA OUT   OUT: points
#include <cstdint>
#include <cstdio>
#include <fstream>
#include <iostream>
#include <string>
#include <vector>

#include "apps/exit_codes.hpp"
#include "engine/components.hpp"
#include "engine/error.hpp"
#include "engine/graph_build.hpp"
#include "engine/neighbours.hpp"
#include "engine/preprocess.hpp"

using namespace unfurl;

namespace {

template <class T>
void read_into(std::ifstream& in, T* data, std::size_t count) {
  in.read(reinterpret_cast<char*>(data), static_cast<std::streamsize>(count * sizeof(T)));
  if (!in) throw IoError("probe: input file too short");
}

PointSet read_points(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw MissingInputError(path + ": cannot open");
  std::uint64_t shape[2];
  read_into(in, shape, 2);
  PointSet p(shape[0], shape[1]);
  read_into(in, p.values.data(), p.values.size());
  return p;
}

template <class T>
void write(std::ofstream& out, const T* data, std::size_t count) {
  out.write(reinterpret_cast<const char*>(data), static_cast<std::streamsize>(count * sizeof(T)));
}

Search search_of(const std::string& s) {
  if (s == "tree") return Search::tree;
  if (s == "scan") return Search::scan;
  throw OptionError("--search: tree or scan, got " + s);
}

void write_edges(const NeighbourGraph& g, const std::string& path, bool with_lengths) {
  std::vector<std::uint32_t> pairs;
  std::vector<float> lengths;
  for (std::size_t v = 0; v < g.nodes(); ++v)
    for (auto e = g.offsets[v]; e < g.offsets[v + 1]; ++e)
      if (g.targets[static_cast<std::size_t>(e)] > v) {
        pairs.push_back(static_cast<std::uint32_t>(v));
        pairs.push_back(g.targets[static_cast<std::size_t>(e)]);
        lengths.push_back(g.lengths[static_cast<std::size_t>(e)]);
      }
  std::ofstream out(path, std::ios::binary);
  const std::uint64_t m = lengths.size();
  write(out, &m, 1);
  write(out, pairs.data(), pairs.size());
  if (with_lengths) write(out, lengths.data(), lengths.size());
}

int run(const std::vector<std::string>& a) {
  if (a.size() == 5 && a[0] == "knn") {
    const auto p = read_points(a[1]);
    const auto r =
        exact_knn(p, p, {.k = std::stoul(a[2]), .search = search_of(a[3]), .exclude_self = true});
    std::ofstream out(a[4], std::ios::binary);
    const std::uint64_t head[2] = {p.rows, r.k};
    write(out, head, 2);
    write(out, r.index.data(), r.index.size());
    write(out, r.distance.data(), r.distance.size());
    return 0;
  }
  if (a.size() == 5 && (a[0] == "radius" || a[0] == "union")) {
    GraphOptions o;
    if (a[0] == "radius") {
      o.neighbourhood = WithinRadius{std::stod(a[2])};
    } else {
      o.neighbourhood = NearestK{std::stoul(a[2])};
    }
    o.search = search_of(a[3]);
    const auto g = build_neighbour_graph(read_points(a[1]), o);
    if (g.summary.duplicate_rows) throw DataError("probe: the points repeat rows");
    write_edges(g.graph, a[4], a[0] == "union");
    return 0;
  }
  if (a.size() == 4 && a[0] == "components") {
    std::ifstream in(a[1], std::ios::binary);
    std::uint64_t m;
    read_into(in, &m, 1);
    std::vector<NodeId> from(m), to(m);
    read_into(in, from.data(), m);
    read_into(in, to.data(), m);
    const std::vector<float> ones(m, 1.0f);
    const auto g = graph_from_edges(std::stoul(a[2]), from, to, ones);
    const auto c = connected_components(g);
    std::ofstream out(a[3], std::ios::binary);
    const std::uint64_t count = c.count;
    write(out, &count, 1);
    write(out, c.label.data(), c.label.size());
    return 0;
  }
  if (a.size() == 6 && a[0] == "preprocess") {
    PreprocessOptions o;
    o.scale = a[2] == "standard" ? Scale::standard : a[2] == "robust" ? Scale::robust : Scale::none;
    o.metric = a[3] == "cosine" ? Metric::cosine : Metric::euclidean;
    o.pca = std::stoul(a[4]);
    const auto p = read_points(a[1]);
    const auto x = apply_preprocess(fit_preprocess(p, o), p);
    std::ofstream out(a[5], std::ios::binary);
    const std::uint64_t head[2] = {x.rows, x.cols};
    write(out, head, 2);
    write(out, x.values.data(), x.values.size());
    return 0;
  }
  std::cerr << "graph_probe: usage: see the comment at the top of graph_probe.cpp\n";
  return 64;
}

}  // namespace

int main(int argc, char** argv) {
  try {
    return run(std::vector<std::string>(argv + 1, argv + argc));
  } catch (const Error& e) {
    std::cerr << "graph_probe: " << e.what() << "\n";
    return static_cast<int>(unfurl::app::exit_code_of(e));
  }
}
