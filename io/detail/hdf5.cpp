#include "io/detail/hdf5.hpp"

#include <algorithm>
#include <array>
#include <mutex>
#include <string_view>

#include "engine/error.hpp"

namespace unfurl::io::detail {

namespace {
struct VisitState {
  std::string prefix;
  std::vector<std::string> paths;
};

herr_t collect_dataset(hid_t, const char* name, const H5O_info_t* info, void* data) {
  auto* state = static_cast<VisitState*>(data);
  if (info->type == H5O_TYPE_DATASET && name && std::string_view(name) != ".")
    state->paths.push_back(state->prefix + name);
  return 0;
}
}  // namespace

std::vector<std::string> visit_datasets(hid_t file, const std::string& group,
                                        const std::string& where) {
  Hid g(H5Gopen2(file, group.c_str(), H5P_DEFAULT));
  if (!g) throw IoError(where + ": " + group + ": cannot open group (corrupt file)");
  VisitState state{group == "/" ? "/" : group + "/", {}};
  if (H5Ovisit(g.get(), H5_INDEX_NAME, H5_ITER_INC, collect_dataset, &state) < 0)
    throw IoError(where + ": cannot list the HDF5 objects (corrupt file)");
  std::sort(state.paths.begin(), state.paths.end());
  return state.paths;
}

void quiet_hdf5_errors() {
  static std::once_flag once;
  std::call_once(once, [] {
    // No library shutdown at exit: it would close again a file whose close already failed
    // (disk full), and HDF5 1.10 crashes doing so. unfurl closes every file it opens itself.
    H5dont_atexit();
    H5Eset_auto2(H5E_DEFAULT, nullptr, nullptr);
  });
}

std::string hdf5_type_name(hid_t type) {
  const std::size_t bits = H5Tget_size(type) * 8;
  switch (H5Tget_class(type)) {
    case H5T_INTEGER:
      return (H5Tget_sign(type) == H5T_SGN_NONE ? "uint" : "int") + std::to_string(bits);
    case H5T_FLOAT:
      return "float" + std::to_string(bits);
    case H5T_STRING:
      return "string";
    case H5T_COMPOUND:
      return "compound";
    case H5T_ENUM:
      return "enum";
    case H5T_ARRAY:
      return "array";
    case H5T_VLEN:
      return "variable-length";
    case H5T_OPAQUE:
      return "opaque";
    case H5T_BITFIELD:
      return "bitfield";
    case H5T_REFERENCE:
      return "reference";
    case H5T_TIME:
      return "time";
    default:
      return "unknown";
  }
}

bool is_plain_numeric_type(hid_t type) {
  const H5T_class_t c = H5Tget_class(type);
  const std::size_t size = H5Tget_size(type);
  const H5T_order_t order = H5Tget_order(type);
  if ((c != H5T_INTEGER && c != H5T_FLOAT) || (order != H5T_ORDER_LE && order != H5T_ORDER_BE))
    return false;
  if (H5Tget_precision(type) != size * 8 || H5Tget_offset(type) != 0) return false;
  if (c == H5T_INTEGER) return size == 1 || size == 2 || size == 4 || size == 8;
  // IEEE 754 binary16/32/64: sign position, exponent position and size, mantissa position
  // and size, exponent bias.
  struct Layout {
    std::size_t size, spos, epos, esize, mpos, msize, bias;
  };
  static constexpr Layout ieee[] = {
      {2, 15, 10, 5, 0, 10, 15}, {4, 31, 23, 8, 0, 23, 127}, {8, 63, 52, 11, 0, 52, 1023}};
  std::size_t spos = 0, epos = 0, esize = 0, mpos = 0, msize = 0;
  if (H5Tget_fields(type, &spos, &epos, &esize, &mpos, &msize) < 0) return false;
  const std::size_t bias = H5Tget_ebias(type);
  for (const Layout& l : ieee)
    if (l.size == size && l.spos == spos && l.epos == epos && l.esize == esize && l.mpos == mpos &&
        l.msize == msize && l.bias == bias && H5Tget_norm(type) == H5T_NORM_IMPLIED)
      return true;
  return false;
}

std::vector<hsize_t> dataspace_dims(hid_t space, const std::string& where) {
  const H5S_class_t kind = H5Sget_simple_extent_type(space);
  if (kind == H5S_SCALAR || kind == H5S_NULL) return {};
  const int ndims = H5Sget_simple_extent_ndims(space);
  if (kind != H5S_SIMPLE || ndims < 0 || ndims > H5S_MAX_RANK)
    throw IoError(where + ": unreadable dataspace (corrupt file)");
  std::vector<hsize_t> dims(static_cast<std::size_t>(ndims));
  if (ndims > 0 && H5Sget_simple_extent_dims(space, dims.data(), nullptr) != ndims)
    throw IoError(where + ": unreadable dataspace (corrupt file)");
  return dims;
}

std::vector<FilterInfo> dataset_filters(hid_t dcpl) {
  std::vector<FilterInfo> filters;
  const int n = H5Pget_nfilters(dcpl);
  for (int i = 0; i < n; ++i) {
    unsigned flags = 0, config = 0;
    std::size_t nvalues = 0;
    std::array<char, 256> name{};
    const H5Z_filter_t id = H5Pget_filter2(dcpl, static_cast<unsigned>(i), &flags, &nvalues,
                                           nullptr, name.size(), name.data(), &config);
    FilterInfo f;
    f.id = static_cast<int>(id);
    f.name = id < 0 ? "unreadable" : std::string(name.data());
    if (f.name.empty()) f.name = "filter " + std::to_string(f.id);
    f.available = id >= 0 && H5Zfilter_avail(id) > 0;
    filters.push_back(f);
  }
  return filters;
}

}  // namespace unfurl::io::detail
