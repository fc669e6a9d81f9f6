// Output files and graph inputs: map file write/read, HDF5 compression, coordinate CSV,
// edge list CSV, NPY distance matrix, and the cost of the forked metadata walk on open.
#include <benchmark/benchmark.h>
#include <unistd.h>

#include <cstdio>
#include <filesystem>
#include <fstream>
#include <string>

#include "engine/random.hpp"
#include "io/csv_writer.hpp"
#include "io/graph_input.hpp"
#include "io/hdf5_file.hpp"
#include "io/map_file.hpp"

namespace {

namespace fs = std::filesystem;

fs::path bench_folder() {
  static const fs::path p = [] {
    fs::path f = fs::temp_directory_path() / ("unfurl-bench-io-" + std::to_string(::getpid()));
    fs::create_directories(f);
    return f;
  }();
  return p;
}

unfurl::io::MapContents map_of(std::size_t n, std::size_t l) {
  unfurl::Random rng(1);
  unfurl::io::MapContents c;
  c.coords = unfurl::PointSet(n, 2);
  for (auto& v : c.coords.values) v = static_cast<float>(rng.normal());
  for (std::size_t i = 0; i < n; ++i) c.rows.push_back(static_cast<std::int64_t>(i));
  c.landmark_rows.assign(c.rows.begin(), c.rows.begin() + static_cast<std::ptrdiff_t>(l));
  c.landmark_coords.assign(l * 2, 0.5);
  unfurl::DistanceRows g;
  g.rows = l;
  g.cols = n;
  for (std::size_t j = 0; j < l; ++j) g.sources.push_back(static_cast<unfurl::NodeId>(j));
  g.values.resize(l * n);
  for (auto& v : g.values) v = static_cast<float>(rng.uniform() * 100.0);
  c.landmark_geodesic = std::move(g);
  c.spectrum.assign(l, 1.0);
  return c;
}

void BM_WriteMap(benchmark::State& state) {
  const auto c = map_of(static_cast<std::size_t>(state.range(0)), 10);
  const fs::path p = bench_folder() / "map.h5";
  const unfurl::io::H5WriteOptions large{static_cast<int>(state.range(1))};
  for (auto _ : state) unfurl::io::write_map(p, c, large);
  state.counters["file_MB"] = static_cast<double>(fs::file_size(p)) / 1e6;
  state.SetBytesProcessed(state.iterations() * static_cast<std::int64_t>(state.range(0)) * 48);
}
// Arguments: N (map rows; 10 landmarks with geodesic rows), deflate level of large datasets.
BENCHMARK(BM_WriteMap)
    ->Args({100000, 0})
    ->Args({1000000, 0})
    ->Args({1000000, 1})
    ->Unit(benchmark::kMillisecond);

void BM_ReadMap(benchmark::State& state) {
  const fs::path p = bench_folder() / "map-read.h5";
  unfurl::io::write_map(p, map_of(static_cast<std::size_t>(state.range(0)), 10));
  for (auto _ : state) benchmark::DoNotOptimize(unfurl::io::read_map(p, true));
  state.SetBytesProcessed(state.iterations() * static_cast<std::int64_t>(state.range(0)) * 48);
}
BENCHMARK(BM_ReadMap)->Arg(100000)->Arg(1000000)->Unit(benchmark::kMillisecond);

// 16 MB of float32 geodesic-like values, contiguous (level 0) against deflated (1, 6).
void BM_H5WriteFloats(benchmark::State& state) {
  unfurl::Random rng(2);
  std::vector<float> v(std::size_t{4} << 20);
  for (auto& x : v) x = static_cast<float>(rng.uniform() * 100.0);
  const fs::path p = bench_folder() / "floats.h5";
  std::uintmax_t bytes = 0;
  for (auto _ : state) {
    unfurl::io::H5Writer out(p);
    out.write("/v", v, {v.size() / 1024, 1024}, {static_cast<int>(state.range(0))});
    out.close();
    bytes = fs::file_size(p);
  }
  state.counters["file_MB"] = static_cast<double>(bytes) / 1e6;
  state.SetBytesProcessed(state.iterations() * static_cast<std::int64_t>(v.size() * 4));
}
BENCHMARK(BM_H5WriteFloats)->Arg(0)->Arg(1)->Arg(6)->Unit(benchmark::kMillisecond);

// Opening a small file through H5Reader (forked metadata walk first) against a bare H5Fopen.
void BM_H5OpenChecked(benchmark::State& state) {
  const fs::path p = bench_folder() / "small.h5";
  unfurl::io::write_map(p, map_of(1000, 10));
  for (auto _ : state) unfurl::io::H5Reader in(p);
}
BENCHMARK(BM_H5OpenChecked)->Unit(benchmark::kMicrosecond);

void BM_H5OpenBare(benchmark::State& state) {
  const fs::path p = bench_folder() / "small.h5";
  unfurl::io::write_map(p, map_of(1000, 10));
  for (auto _ : state) {
    const hid_t f = H5Fopen(p.c_str(), H5F_ACC_RDONLY, H5P_DEFAULT);
    H5Fclose(f);
  }
}
BENCHMARK(BM_H5OpenBare)->Unit(benchmark::kMicrosecond);

void BM_WriteCoordinatesCsv(benchmark::State& state) {
  const auto c = map_of(static_cast<std::size_t>(state.range(0)), 1);
  const fs::path p = bench_folder() / "map.csv";
  for (auto _ : state) unfurl::io::write_coordinates_csv(p, c.coords, c.rows);
  state.SetItemsProcessed(state.iterations() * state.range(0));
}
BENCHMARK(BM_WriteCoordinatesCsv)->Arg(1000000)->Unit(benchmark::kMillisecond);

void BM_ReadEdgeListCsv(benchmark::State& state) {
  const fs::path p = bench_folder() / "edges.csv";
  {
    unfurl::Random rng(3);
    std::FILE* f = std::fopen(p.c_str(), "w");
    for (std::int64_t e = 0; e < state.range(0); ++e)
      std::fprintf(f, "%lld,%lld,%.9g\n", static_cast<long long>(e / 10),
                   static_cast<long long>(100000 + rng.uniform() * 100000), rng.uniform() * 10);
    std::fclose(f);
  }
  for (auto _ : state) benchmark::DoNotOptimize(unfurl::io::read_edge_list(p));
  state.SetItemsProcessed(state.iterations() * state.range(0));
  state.SetBytesProcessed(state.iterations() * static_cast<std::int64_t>(fs::file_size(p)));
}
BENCHMARK(BM_ReadEdgeListCsv)->Arg(1000000)->Unit(benchmark::kMillisecond);

void BM_ReadDistancesNpy(benchmark::State& state) {
  const auto n = static_cast<std::size_t>(state.range(0));
  const fs::path p = bench_folder() / "d.npy";
  {
    std::string dict = "{'descr': '<f4', 'fortran_order': False, 'shape': (" + std::to_string(n) +
                       ", " + std::to_string(n) + "), }";
    while ((10 + dict.size() + 1) % 64) dict += ' ';
    dict += '\n';
    std::ofstream out(p, std::ios::binary);
    out.write("\x93NUMPY\x01\x00", 8);
    const char len[2] = {static_cast<char>(dict.size() & 0xff),
                         static_cast<char>(dict.size() >> 8)};
    out.write(len, 2);
    out << dict;
    std::vector<float> d(n * n);
    for (std::size_t i = 0; i < n; ++i)
      for (std::size_t j = 0; j < n; ++j) d[i * n + j] = static_cast<float>(i > j ? i - j : j - i);
    out.write(reinterpret_cast<const char*>(d.data()), static_cast<std::streamsize>(d.size() * 4));
  }
  for (auto _ : state) benchmark::DoNotOptimize(unfurl::io::read_partial_distances(p));
  state.SetBytesProcessed(state.iterations() * static_cast<std::int64_t>(n * n * 4));
}
BENCHMARK(BM_ReadDistancesNpy)->Arg(4000)->Unit(benchmark::kMillisecond);

}  // namespace
