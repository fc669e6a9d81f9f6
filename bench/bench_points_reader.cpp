// Point input speed: io::read_points on the same N x 10 float table stored as CSV, NPY and
// HDF5 (contiguous, and chunked with gzip). The files are written once per size into the
// temporary folder and removed at exit.
#include <benchmark/benchmark.h>
#include <hdf5.h>

#include <cstdio>
#include <filesystem>
#include <fstream>
#include <map>
#include <random>
#include <string>
#include <vector>

#include "io/points_reader.hpp"

namespace {

constexpr std::size_t kCols = 10;

struct Files {
  std::filesystem::path folder;
  std::filesystem::path csv, npy, h5;
  ~Files() {
    std::error_code ec;
    std::filesystem::remove_all(folder, ec);
  }
};

std::vector<float> table(std::size_t rows) {
  std::mt19937 gen(42);
  std::normal_distribution<float> normal;
  std::vector<float> v(rows * kCols);
  for (float& x : v) x = normal(gen);
  return v;
}

void write_h5(const std::filesystem::path& file, const std::vector<float>& v, std::size_t rows) {
  const hid_t f = H5Fcreate(file.c_str(), H5F_ACC_TRUNC, H5P_DEFAULT, H5P_DEFAULT);
  const hsize_t dims[2] = {rows, kCols};
  const hid_t space = H5Screate_simple(2, dims, nullptr);
  const hid_t plain =
      H5Dcreate2(f, "/plain", H5T_IEEE_F32LE, space, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
  H5Dwrite(plain, H5T_NATIVE_FLOAT, H5S_ALL, H5S_ALL, H5P_DEFAULT, v.data());
  const hid_t dcpl = H5Pcreate(H5P_DATASET_CREATE);
  const hsize_t chunk[2] = {4096, kCols};
  H5Pset_chunk(dcpl, 2, chunk);
  H5Pset_deflate(dcpl, 4);
  const hid_t gz = H5Dcreate2(f, "/gzip", H5T_IEEE_F32LE, space, H5P_DEFAULT, dcpl, H5P_DEFAULT);
  H5Dwrite(gz, H5T_NATIVE_FLOAT, H5S_ALL, H5S_ALL, H5P_DEFAULT, v.data());
  H5Dclose(gz);
  H5Pclose(dcpl);
  H5Dclose(plain);
  H5Sclose(space);
  H5Fclose(f);
}

const Files& files_for(std::size_t rows) {
  static std::map<std::size_t, Files> cache;
  auto it = cache.find(rows);
  if (it != cache.end()) return it->second;
  Files& f = cache[rows];
  f.folder = std::filesystem::temp_directory_path() / ("unfurl-bench-" + std::to_string(rows));
  std::filesystem::create_directories(f.folder);
  f.csv = f.folder / "p.csv";
  f.npy = f.folder / "p.npy";
  f.h5 = f.folder / "p.h5";
  const auto v = table(rows);
  {
    std::ofstream out(f.csv);
    char buf[32];
    for (std::size_t i = 0; i < rows; ++i)
      for (std::size_t j = 0; j < kCols; ++j) {
        std::snprintf(buf, sizeof buf, "%.9g%c", static_cast<double>(v[i * kCols + j]),
                      j + 1 == kCols ? '\n' : ',');
        out << buf;
      }
  }
  {
    // NPY 1.0 (numpy.lib.format, NEP 1): preamble padded to 64 bytes.
    std::string dict = "{'descr': '<f4', 'fortran_order': False, 'shape': (" +
                       std::to_string(rows) + ", " + std::to_string(kCols) + "), }";
    dict.append(64 - (10 + dict.size() + 1) % 64, ' ');
    dict += '\n';
    std::ofstream out(f.npy, std::ios::binary);
    out << "\x93NUMPY\x01" << '\0' << static_cast<char>(dict.size() & 0xff)
        << static_cast<char>(dict.size() >> 8) << dict;
    out.write(reinterpret_cast<const char*>(v.data()),
              static_cast<std::streamsize>(v.size() * sizeof(float)));
  }
  write_h5(f.h5, v, rows);
  return f;
}

void run(benchmark::State& state, const std::filesystem::path& file, const std::string& dataset) {
  const auto rows = static_cast<std::size_t>(state.range(0));
  unfurl::io::PointReadOptions options;
  options.dataset = dataset;
  for (auto _ : state) {
    auto r = unfurl::io::read_points(file, options);
    benchmark::DoNotOptimize(r.points.values.data());
  }
  state.SetItemsProcessed(static_cast<std::int64_t>(state.iterations() * rows));
  state.counters["MB_per_s"] = benchmark::Counter(
      static_cast<double>(state.iterations() * rows * kCols * sizeof(float)) / 1e6,
      benchmark::Counter::kIsRate);
}

void BM_ReadCsv(benchmark::State& s) {
  run(s, files_for(static_cast<std::size_t>(s.range(0))).csv, "");
}
void BM_ReadNpy(benchmark::State& s) {
  run(s, files_for(static_cast<std::size_t>(s.range(0))).npy, "");
}
void BM_ReadHdf5Contiguous(benchmark::State& s) {
  run(s, files_for(static_cast<std::size_t>(s.range(0))).h5, "/plain");
}
void BM_ReadHdf5Gzip(benchmark::State& s) {
  run(s, files_for(static_cast<std::size_t>(s.range(0))).h5, "/gzip");
}

}  // namespace

BENCHMARK(BM_ReadCsv)->Arg(100000)->Arg(1000000)->Unit(benchmark::kMillisecond);
BENCHMARK(BM_ReadNpy)->Arg(100000)->Arg(1000000)->Unit(benchmark::kMillisecond);
BENCHMARK(BM_ReadHdf5Contiguous)->Arg(100000)->Arg(1000000)->Unit(benchmark::kMillisecond);
BENCHMARK(BM_ReadHdf5Gzip)->Arg(100000)->Arg(1000000)->Unit(benchmark::kMillisecond);
