#include "io/detail/map_array_io.hpp"

#include "io/detail/h5_json.hpp"

namespace unfurl::io::detail {

H5WriteOptions layout_for_bytes(std::size_t bytes, H5WriteOptions large) {
  constexpr std::size_t large_above_bytes = std::size_t{4} << 20;
  return bytes > large_above_bytes ? large : H5WriteOptions{};
}

void write_map_array(H5Writer& out, const MapArray& a, H5WriteOptions large) {
  out.write(a.path, a.values, a.dims, layout_for_bytes(a.values.size() * sizeof(double), large));
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
