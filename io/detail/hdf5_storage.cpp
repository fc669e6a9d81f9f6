#include "io/detail/hdf5_storage.hpp"

#include <algorithm>
#include <system_error>
#include <vector>

#include "engine/error.hpp"
#include "io/detail/hdf5_sandbox.hpp"

namespace unfurl::io::detail {

namespace {

// A crafted file can declare a dataset far larger than itself; refuse one whose data could
// not fit even at the best ratio the deflate format can reach (1032:1, RFC 1951 length
// codes), plus slack for small files.
constexpr double kMaxInflation = 1032.0;
constexpr double kSlackBytes = 1048576.0;  // common practice, no source

std::string quoted(const std::string& name) {
  return "'" + name + "'";
}

// Where HDF5 looks for a relative name: beside the file holding the reference (we open
// datasets with the "${ORIGIN}" prefix); an absolute name stays as it is.
std::filesystem::path beside(const std::filesystem::path& file, const std::string& name) {
  const std::filesystem::path p(name);
  return p.is_absolute() ? p : file.parent_path() / p;
}

bool is_regular(const std::filesystem::path& p) {
  std::error_code ec;
  return std::filesystem::is_regular_file(p, ec);
}

std::uintmax_t size_of(const std::filesystem::path& p) {
  std::error_code ec;
  const std::uintmax_t n = std::filesystem::file_size(p, ec);
  return ec ? 0 : n;
}

std::string text_property(hid_t dcpl, std::size_t index,
                          ssize_t (*get)(hid_t, size_t, char*, size_t)) {
  const ssize_t n = get(dcpl, index, nullptr, 0);
  if (n < 0 || n > 65536) return "";
  std::vector<char> buf(static_cast<std::size_t>(n) + 1, '\0');
  get(dcpl, index, buf.data(), buf.size());
  return std::string(buf.data());
}

// External raw data (H5Pset_external): every segment's file must exist and hold its bytes.
double external_bytes(const H5OpenDataset& d, const std::filesystem::path& file) {
  const int count = H5Pget_external_count(d.dcpl.get());
  double held = 0;
  for (int i = 0; i < count; ++i) {
    char name[4097] = {};
    off_t offset = 0;
    hsize_t bytes = 0;
    if (H5Pget_external(d.dcpl.get(), static_cast<unsigned>(i), sizeof name - 1, name, &offset,
                        &bytes) < 0)
      throw IoError(d.where + ": external storage list unreadable (corrupt file)");
    const std::filesystem::path raw = beside(file, name);
    if (!is_regular(raw))
      throw IoError(d.where + ": external raw data file " + quoted(raw.string()) + " is missing");
    const double size = static_cast<double>(size_of(raw));
    const double from = std::max(0.0, size - static_cast<double>(std::max<off_t>(offset, 0)));
    held += bytes == H5F_UNLIMITED ? from : std::min(from, static_cast<double>(bytes));
  }
  return held;
}

// A virtual dataset: every source file and dataset must exist, and the mappings must cover
// every element. Returns the bytes of the source files.
double virtual_bytes(const H5OpenDataset& d, const std::filesystem::path& file, double elements,
                     const StopToken& stop) {
  std::size_t count = 0;
  if (H5Pget_virtual_count(d.dcpl.get(), &count) < 0)
    throw IoError(d.where + ": virtual dataset mappings unreadable (corrupt file)");
  double held = 0, mapped = 0;
  for (std::size_t i = 0; i < count; ++i) {
    Hid vspace(H5Pget_virtual_vspace(d.dcpl.get(), i));
    const hssize_t points = vspace ? H5Sget_select_npoints(vspace.get()) : -1;
    if (points < 0) throw IoError(d.where + ": virtual dataset mapping unreadable (corrupt file)");
    mapped += static_cast<double>(points);
    const std::string source = text_property(d.dcpl.get(), i, H5Pget_virtual_filename);
    const std::string dataset = text_property(d.dcpl.get(), i, H5Pget_virtual_dsetname);
    if (source.empty() || dataset.empty())
      throw IoError(d.where + ": virtual dataset mapping unreadable (corrupt file)");
    if (source == ".") {
      Hid own(H5Iget_file_id(d.set.get()));
      if (!own || H5Lexists(own.get(), dataset.c_str(), H5P_DEFAULT) <= 0)
        throw IoError(d.where + ": virtual dataset source " + quoted(dataset) +
                      " is missing from this file");
      continue;
    }
    const std::filesystem::path src = beside(file, source);
    if (!is_regular(src))
      throw IoError(d.where + ": virtual dataset source file " + quoted(src.string()) +
                    " is missing");
    if (H5Fis_hdf5(src.c_str()) <= 0)
      throw IoError(d.where + ": virtual dataset source file " + quoted(src.string()) +
                    " is not an HDF5 file");
    check_hdf5_in_child(src, stop);
    Hid fapl(H5Pcreate(H5P_FILE_ACCESS));
    if (fapl) H5Pset_file_locking(fapl.get(), 1, 1);
    Hid f(H5Fopen(src.c_str(), H5F_ACC_RDONLY, fapl.get()));
    if (!f || H5Lexists(f.get(), dataset.c_str(), H5P_DEFAULT) <= 0 ||
        H5Oexists_by_name(f.get(), dataset.c_str(), H5P_DEFAULT) <= 0)
      throw IoError(d.where + ": virtual dataset source " + quoted(src.string() + ":" + dataset) +
                    " is missing");
    held += static_cast<double>(size_of(src));
  }
  if (mapped < elements)
    throw DataError(d.where + ": virtual dataset maps " + std::to_string(std::uint64_t(mapped)) +
                    " of its " + std::to_string(std::uint64_t(elements)) +
                    " elements to a source; the rest was never written");
  return held;
}

// The chunk shape, checked as HDF5 checks it when it creates a dataset (every chunk dimension
// positive and within a fixed maximum dimension, a chunk under 4 GiB), and every chunk of
// the grid written. A damaged file can declare any chunk shape, and HDF5 1.10 reads past its
// buffers on some of them.
void check_chunks(const H5OpenDataset& d) {
  const std::size_t rank = d.info.dims.size();
  std::vector<hsize_t> dims(rank), maxdims(rank), chunk(rank);
  const bool ok =
      rank > 0 &&
      H5Sget_simple_extent_dims(d.space.get(), dims.data(), maxdims.data()) ==
          static_cast<int>(rank) &&
      H5Pget_chunk(d.dcpl.get(), static_cast<int>(rank), chunk.data()) == static_cast<int>(rank);
  double bytes = static_cast<double>(d.info.element_bytes), grid = 1;
  bool fits = ok;
  for (std::size_t i = 0; i < rank && fits; ++i) {
    fits = chunk[i] > 0 && maxdims[i] >= dims[i] &&
           (maxdims[i] == H5S_UNLIMITED || chunk[i] <= maxdims[i]);
    bytes *= static_cast<double>(chunk[i]);
    if (fits) grid *= static_cast<double>((dims[i] + chunk[i] - 1) / chunk[i]);
  }
  if (!fits || bytes >= 4294967296.0) {
    std::string shape;
    for (std::size_t i = 0; i < rank; ++i) shape += (i ? " x " : "") + std::to_string(chunk[i]);
    throw IoError(d.where + ": chunk shape " + shape + " does not fit the dataset (corrupt file)");
  }
  hsize_t written = 0;
  if (H5Dget_num_chunks(d.set.get(), d.space.get(), &written) < 0)
    throw IoError(d.where + ": chunk index unreadable (corrupt file)");
  if (static_cast<double>(written) < grid)
    throw DataError(d.where + ": chunked dataset with " +
                    std::to_string(static_cast<std::uint64_t>(grid - written)) + " of its " +
                    std::to_string(static_cast<std::uint64_t>(grid)) +
                    " chunks never written (they would read as fill values)");
}

}  // namespace

void check_storage(const H5OpenDataset& d, const std::filesystem::path& file,
                   std::uintmax_t file_bytes, const StopToken& stop) {
  double elements = 1;
  for (std::size_t n : d.info.dims) elements *= static_cast<double>(n);
  const double claimed = elements * static_cast<double>(d.info.element_bytes);
  if (claimed == 0) return;
  double available = static_cast<double>(file_bytes);
  const std::string& layout = d.info.storage;
  const double stored = static_cast<double>(H5Dget_storage_size(d.set.get()));
  if (layout == "external") {
    available = external_bytes(d, file);
    if (available < claimed)
      throw IoError(d.where + ": external raw data files hold " +
                    std::to_string(static_cast<std::uint64_t>(available)) + " of the " +
                    std::to_string(static_cast<std::uint64_t>(claimed)) + " bytes declared");
  } else if (layout == "virtual") {
    available += virtual_bytes(d, file, elements, stop);
  } else if (layout == "contiguous") {
    H5D_space_status_t status{};
    if (H5Dget_space_status(d.set.get(), &status) >= 0 && status == H5D_SPACE_STATUS_NOT_ALLOCATED)
      throw DataError(d.where +
                      ": data was never written (no storage allocated; it would read "
                      "as fill values)");
    if (stored < claimed)
      throw IoError(d.where + ": shape needs " + std::to_string(std::uint64_t(claimed)) +
                    " bytes but the file stores " + std::to_string(std::uint64_t(stored)) +
                    " (corrupt file)");
  } else if (layout == "chunked") {
    check_chunks(d);
    // Deflate compresses by at most 1032:1 (see kMaxInflation), shuffle and checksums not at
    // all; other filters (scale-offset, szip, ...) have no such bound.
    bool bounded = true;
    for (const FilterInfo& f : d.info.filters)
      bounded = bounded && (f.id == H5Z_FILTER_DEFLATE || f.id == H5Z_FILTER_SHUFFLE ||
                            f.id == H5Z_FILTER_FLETCHER32);
    if (bounded && stored * kMaxInflation * 1.07 < claimed)
      throw IoError(d.where + ": shape needs " + std::to_string(std::uint64_t(claimed)) +
                    " bytes, more than the " + std::to_string(std::uint64_t(stored)) +
                    " stored could inflate to (corrupt file)");
  }
  if (claimed > available * kMaxInflation + kSlackBytes)
    throw IoError(d.where + ": declares " + std::to_string(std::uint64_t(claimed)) +
                  " bytes of data, more than the file can hold (corrupt file)");
}

void check_external_links(hid_t file_id, const std::string& object,
                          const std::filesystem::path& file, const StopToken& stop) {
  std::size_t end = 0;
  while (end != std::string::npos) {
    end = object.find('/', end + 1);
    const std::string prefix = object.substr(0, end);
    if (prefix.size() <= 1) continue;
    H5L_info_t info{};
    if (H5Lget_info(file_id, prefix.c_str(), &info, H5P_DEFAULT) < 0) return;
    if (info.type != H5L_TYPE_EXTERNAL) continue;
    if (info.u.val_size == 0 || info.u.val_size > 65536)
      throw IoError(file.string() + ": " + prefix + ": external link unreadable (corrupt file)");
    std::vector<char> value(info.u.val_size + 1, '\0');
    const char* target = nullptr;
    const char* target_object = nullptr;
    unsigned flags = 0;
    if (H5Lget_val(file_id, prefix.c_str(), value.data(), info.u.val_size, H5P_DEFAULT) < 0 ||
        H5Lunpack_elink_val(value.data(), info.u.val_size, &flags, &target, &target_object) < 0 ||
        target == nullptr)
      throw IoError(file.string() + ": " + prefix + ": external link unreadable (corrupt file)");
    // HDF5 tries the name beside the linking file, then as given (the working folder).
    std::filesystem::path found = beside(file, target);
    if (!is_regular(found)) found = target;
    if (!is_regular(found))
      throw IoError(file.string() + ": " + prefix + ": external link to missing file " +
                    quoted(target));
    check_hdf5_in_child(found, stop);
  }
}

}  // namespace unfurl::io::detail
