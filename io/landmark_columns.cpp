#include "io/landmark_columns.hpp"

#include <algorithm>
#include <cmath>
#include <string>

#include "engine/error.hpp"
#include "io/hdf5_file.hpp"

namespace unfurl::io {
namespace {

const char* const kGeodesic = "/landmarks/geodesic";

void expect_dims(const H5Reader& in, const std::string& dataset,
                 const std::vector<std::size_t>& want) {
  const H5DatasetInfo info = in.require_rank(dataset, want.size());
  if (info.dims != want) {
    std::string got, expected;
    for (std::size_t i = 0; i < want.size(); ++i) {
      got += (i ? " x " : "") + std::to_string(info.dims[i]);
      expected += (i ? " x " : "") + std::to_string(want[i]);
    }
    throw DataError(in.path().string() + ": " + dataset + ": is " + got + ", expected " + expected);
  }
}

}  // namespace

bool has_landmark_rows(const std::filesystem::path& map) {
  const H5Reader in(map);
  return in.has_dataset(kGeodesic) && in.has_dataset("/landmarks/nodes");
}

LandmarkColumns read_landmark_columns(const std::filesystem::path& map, std::size_t n,
                                      std::size_t l, StopToken stop) {
  const H5Reader in(map, stop);
  if (!in.has_dataset(kGeodesic))
    throw MissingInputError(map.string() + ": " + kGeodesic + ": missing (placement needs it)");
  expect_dims(in, kGeodesic, {l, n});
  LandmarkColumns c;
  c.nodes = n;
  c.landmarks = l;
  c.values.resize(n * l);
  const H5OpenDataset data = in.open_data(kGeodesic);
  constexpr std::size_t kBlockColumns = 8192;  // L x 8192 floats of scratch (8 MiB at L = 256)
  std::vector<float> block;
  for (std::size_t c0 = 0; c0 < n; c0 += kBlockColumns) {
    stop.check("reading the map");
    const std::size_t width = std::min(kBlockColumns, n - c0);
    const hsize_t start[2] = {0, c0};
    const hsize_t count[2] = {l, width};
    detail::Hid mem(H5Screate_simple(2, count, nullptr));
    if (!mem ||
        H5Sselect_hyperslab(data.space.get(), H5S_SELECT_SET, start, nullptr, count, nullptr) < 0)
      throw IoError(data.where + ": cannot select columns " + std::to_string(c0));
    block.resize(l * width);
    if (H5Dread(data.set.get(), H5T_NATIVE_FLOAT, mem.get(), data.space.get(), H5P_DEFAULT,
                block.data()) < 0)
      throw IoError(data.where + ": reading columns " + std::to_string(c0) + ":" +
                    std::to_string(c0 + width) + " failed (truncated or corrupt file)");
    for (std::size_t i = 0; i < l; ++i)
      for (std::size_t j = 0; j < width; ++j) c.values[(c0 + j) * l + i] = block[i * width + j];
  }
  for (float v : c.values)
    if (!(v >= 0.0f) || !std::isfinite(v))
      throw DataError(data.where + ": holds a negative, infinite or NaN distance");
  return c;
}

}  // namespace unfurl::io
