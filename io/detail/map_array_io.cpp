#include "io/detail/map_array_io.hpp"

#include "io/detail/h5_json.hpp"

namespace unfurl::io::detail {

H5WriteOptions layout_for_bytes(std::size_t bytes) {
  constexpr std::size_t compress_above_bytes = std::size_t{4} << 20;
  return H5WriteOptions{bytes > compress_above_bytes ? 1 : 0};
}

void write_map_array(H5Writer& out, const MapArray& a) {
  out.write(a.path, a.values, a.dims, layout_for_bytes(a.values.size() * sizeof(double)));
  write_json_attributes(out, a.path, a.attributes);
}

MapArray read_map_array(const H5Reader& in, const std::string& dataset) {
  MapArray a;
  a.path = dataset;
  a.dims = in.info(dataset).dims;
  a.values = in.read<double>(dataset);
  a.attributes = read_json_attributes(in, dataset);
  return a;
}

}  // namespace unfurl::io::detail
