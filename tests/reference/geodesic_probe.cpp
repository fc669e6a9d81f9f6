// Exposes the geodesic and spectral stages to tests/reference/geodesic_check.py.
//
// Files are raw little-endian binary:
// - edge list: int64 nodes, int64 edges, then uint32 a[edges], uint32 b[edges],
//   float32 length[edges]; read as an undirected graph (a pair given twice keeps the
//   shorter length, as SciPy's shortest_path(directed=False) does);
// - outputs: float32 row-major matrices with no header; the script knows the shape.
//
// geodesic_probe rows EDGES OUT                      all N x N geodesic rows
// geodesic_probe exact EDGES OUT DIMS                exact-mode map, N x DIMS
// geodesic_probe landmark EDGES OUT DIMS L SEED PICK landmark map (PICK: maxmin|random)
// geodesic_probe swiss N SEED OUT                    swiss_roll points (N x 3), truth (N x 2)
// geodesic_probe linear POINTS OUT DIMS              PCA map; POINTS: int64 n, int64 d, float32[]
// A summary line goes to stdout; errors to stderr with exit code 65 (or the stage's code).
#include <cstdint>
#include <cstdio>
#include <fstream>
#include <iostream>
#include <span>
#include <string>
#include <vector>

#include "apps/exit_codes.hpp"
#include "engine/error.hpp"
#include "engine/geodesic.hpp"
#include "engine/landmarks.hpp"
#include "engine/linear.hpp"
#include "engine/spectral.hpp"
#include "engine/synthetic.hpp"
#include "tests/test_util.hpp"

namespace {

template <class T>
void read_into(std::ifstream& in, std::vector<T>& v, std::size_t count, const std::string& path) {
  v.resize(count);
  in.read(reinterpret_cast<char*>(v.data()), static_cast<std::streamsize>(count * sizeof(T)));
  if (!in) throw unfurl::IoError(path + ": file ends early");
}

unfurl::NeighbourGraph read_graph(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw unfurl::MissingInputError(path + ": cannot open");
  std::int64_t header[2];
  in.read(reinterpret_cast<char*>(header), sizeof header);
  if (!in || header[0] < 0 || header[1] < 0) throw unfurl::IoError(path + ": bad header");
  const auto n = static_cast<std::size_t>(header[0]), e = static_cast<std::size_t>(header[1]);
  std::vector<std::uint32_t> a, b;
  std::vector<float> w;
  read_into(in, a, e, path);
  read_into(in, b, e, path);
  read_into(in, w, e, path);
  std::vector<unfurl::test::Edge> edges(e);
  for (std::size_t k = 0; k < e; ++k) {
    if (a[k] >= n || b[k] >= n)
      throw unfurl::DataError(path + ": edge " + std::to_string(k) + " leaves the graph");
    edges[k] = {a[k], b[k], w[k]};
  }
  return unfurl::test::graph_from_edges(n, edges);
}

void write_floats(const std::string& path, std::span<const float> v) {
  std::ofstream out(path, std::ios::binary);
  out.write(reinterpret_cast<const char*>(v.data()),
            static_cast<std::streamsize>(v.size() * sizeof(float)));
  if (!out) throw unfurl::IoError(path + ": write failed");
}

void print_summary(const unfurl::SpectralResult& r) {
  std::cout << "solver=" << r.summary.solver << " converged=" << r.summary.converged
            << " operations=" << r.summary.operations << " negative_ratio=" << r.negative_ratio
            << " spectrum=";
  for (double v : r.spectrum) std::cout << v << ',';
  std::cout << '\n';
}

int run(const std::vector<std::string>& a) {
  const std::string mode = a.size() > 1 ? a[1] : "";
  if (mode == "rows" && a.size() == 4) {
    write_floats(a[3], unfurl::geodesic_rows(read_graph(a[2]), {unfurl::EveryNode{}}).rows.values);
  } else if (mode == "exact" && a.size() == 5) {
    const auto rows = unfurl::geodesic_rows(read_graph(a[2]), {unfurl::EveryNode{}}).rows;
    unfurl::SpectralOptions o;
    o.dims = std::stoul(a[4]);
    const auto r = unfurl::exact_mds(rows, o);
    print_summary(r);
    write_floats(a[3], r.coords.values);
  } else if (mode == "landmark" && a.size() == 8) {
    unfurl::LandmarkOptions lo;
    lo.count = unfurl::LandmarkCount{std::stoul(a[5])};
    lo.seed = std::stoull(a[6]);
    lo.pick = a[7] == "random" ? unfurl::Pick::random : unfurl::Pick::maxmin;
    const auto picked = unfurl::pick_landmarks(read_graph(a[2]), lo);
    unfurl::SpectralOptions o;
    o.dims = std::stoul(a[4]);
    const auto r = unfurl::landmark_mds(picked.rows, o);
    print_summary(r);
    write_floats(a[3], r.coords.values);
  } else if (mode == "swiss" && a.size() == 5) {
    const auto s = unfurl::swiss_roll(std::stoul(a[2]), std::stoull(a[3]));
    std::vector<float> both = s.points.values;
    both.insert(both.end(), s.truth.values.begin(), s.truth.values.end());
    write_floats(a[4], both);
  } else if (mode == "linear" && a.size() == 5) {
    std::ifstream in(a[2], std::ios::binary);
    std::int64_t header[2];
    in.read(reinterpret_cast<char*>(header), sizeof header);
    if (!in || header[0] < 0 || header[1] < 0) throw unfurl::IoError(a[2] + ": bad header");
    unfurl::PointSet p;
    p.rows = static_cast<std::size_t>(header[0]);
    p.cols = static_cast<std::size_t>(header[1]);
    read_into(in, p.values, p.rows * p.cols, a[2]);
    unfurl::LinearOptions o;
    o.dims = std::stoul(a[4]);
    const auto r = unfurl::linear_map(p, o);
    std::cout << "spectrum=";
    for (double v : r.spectrum) std::cout << v << ',';
    std::cout << '\n';
    write_floats(a[3], r.coords.values);
  } else {
    std::cerr << "geodesic_probe: usage: see the comment at the top of geodesic_probe.cpp\n";
    return 64;
  }
  return 0;
}

}  // namespace

int main(int argc, char** argv) {
  std::cout.precision(17);
  try {
    return run(std::vector<std::string>(argv, argv + argc));
  } catch (const unfurl::Error& e) {
    std::cerr << "geodesic_probe: " << e.what() << '\n';
    return static_cast<int>(unfurl::app::exit_code_of(e));
  } catch (const std::exception& e) {
    std::cerr << "geodesic_probe: " << e.what() << '\n';
    return 64;
  }
}
