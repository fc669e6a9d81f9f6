#include "tests/io/point_fixtures.hpp"

#include <fstream>
#include <random>
#include <stdexcept>

namespace unfurl::test {

namespace {

void check(herr_t status, const char* what) {
  if (status < 0) throw std::runtime_error(std::string("test fixture: ") + what + " failed");
}
hid_t checked(hid_t id, const char* what) {
  if (id < 0) throw std::runtime_error(std::string("test fixture: ") + what + " failed");
  return id;
}

hid_t open_or_create(const std::filesystem::path& file) {
  if (std::filesystem::exists(file))
    return checked(H5Fopen(file.c_str(), H5F_ACC_RDWR, H5P_DEFAULT), "H5Fopen");
  return checked(H5Fcreate(file.c_str(), H5F_ACC_TRUNC, H5P_DEFAULT, H5P_DEFAULT), "H5Fcreate");
}

void add_dataset(const std::filesystem::path& file, const std::string& dataset, hid_t space,
                 hid_t file_type, hid_t mem_type, const void* data, hid_t dcpl) {
  const hid_t f = open_or_create(file);
  const hid_t lcpl = checked(H5Pcreate(H5P_LINK_CREATE), "H5Pcreate");
  check(H5Pset_create_intermediate_group(lcpl, 1), "intermediate groups");
  const hid_t d = checked(H5Dcreate2(f, dataset.c_str(), file_type, space, lcpl, dcpl, H5P_DEFAULT),
                          "H5Dcreate2");
  if (data && H5Sget_simple_extent_npoints(space) > 0)
    check(H5Dwrite(d, mem_type, H5S_ALL, H5S_ALL, H5P_DEFAULT, data), "H5Dwrite");
  H5Dclose(d);
  H5Pclose(lcpl);
  H5Fclose(f);
}

}  // namespace

TempDir::TempDir() {
  std::random_device rd;
  path_ = std::filesystem::temp_directory_path() /
          ("unfurl-test-" + std::to_string(rd()) + "-" + std::to_string(rd()));
  std::filesystem::create_directories(path_);
}

TempDir::~TempDir() {
  std::error_code ec;
  std::filesystem::remove_all(path_, ec);
}

void write_hdf5(const std::filesystem::path& file, const std::string& dataset,
                const std::vector<hsize_t>& dims, hid_t file_type, hid_t mem_type, const void* data,
                const Hdf5Layout& layout) {
  const hid_t space =
      checked(H5Screate_simple(static_cast<int>(dims.size()), dims.data(), nullptr), "space");
  const hid_t dcpl = checked(H5Pcreate(H5P_DATASET_CREATE), "dcpl");
  if (layout.chunked) {
    std::vector<hsize_t> chunk = dims;
    chunk[0] = layout.chunk_rows;
    check(H5Pset_chunk(dcpl, static_cast<int>(chunk.size()), chunk.data()), "chunk");
    if (layout.gzip_level > 0) {
      check(H5Pset_shuffle(dcpl), "shuffle");
      check(H5Pset_deflate(dcpl, static_cast<unsigned>(layout.gzip_level)), "deflate");
    }
  }
  add_dataset(file, dataset, space, file_type, mem_type, data, dcpl);
  H5Pclose(dcpl);
  H5Sclose(space);
}

void write_string_dataset(const std::filesystem::path& file, const std::string& dataset) {
  const hsize_t dims[2] = {3, 2};
  const char text[6][4] = {"ab", "cd", "ef", "gh", "ij", "kl"};
  const hid_t type = checked(H5Tcopy(H5T_C_S1), "string type");
  check(H5Tset_size(type, 4), "string size");
  const hid_t space = checked(H5Screate_simple(2, dims, nullptr), "space");
  add_dataset(file, dataset, space, type, type, text, H5P_DEFAULT);
  H5Sclose(space);
  H5Tclose(type);
}

void write_compound_dataset(const std::filesystem::path& file, const std::string& dataset) {
  struct Record {
    double x;
    int n;
  };
  const Record records[4] = {{1.0, 1}, {2.0, 2}, {3.0, 3}, {4.0, 4}};
  const hsize_t dims[2] = {2, 2};
  const hid_t type = checked(H5Tcreate(H5T_COMPOUND, sizeof(Record)), "compound");
  check(H5Tinsert(type, "x", HOFFSET(Record, x), H5T_NATIVE_DOUBLE), "insert x");
  check(H5Tinsert(type, "n", HOFFSET(Record, n), H5T_NATIVE_INT), "insert n");
  const hid_t space = checked(H5Screate_simple(2, dims, nullptr), "space");
  add_dataset(file, dataset, space, type, type, records, H5P_DEFAULT);
  H5Sclose(space);
  H5Tclose(type);
}

void write_hdf5_attribute(const std::filesystem::path& file, const std::string& object,
                          const std::string& name, const std::string& text) {
  const hid_t f = open_or_create(file);
  const hid_t type = checked(H5Tcopy(H5T_C_S1), "string type");
  check(H5Tset_size(type, text.size() + 1), "string size");
  const hid_t space = checked(H5Screate(H5S_SCALAR), "scalar");
  const hid_t a = checked(H5Acreate_by_name(f, object.c_str(), name.c_str(), type, space,
                                            H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT),
                          "H5Acreate");
  check(H5Awrite(a, type, text.c_str()), "H5Awrite");
  H5Aclose(a);
  H5Sclose(space);
  H5Tclose(type);
  H5Fclose(f);
}

void write_npy(const std::filesystem::path& file, const std::string& descr,
               const std::vector<std::size_t>& shape, bool fortran_order, const std::string& data,
               int major_version) {
  std::string shape_text = "(";
  for (std::size_t s : shape) shape_text += std::to_string(s) + ", ";
  if (shape.size() > 1) shape_text.resize(shape_text.size() - 2);
  if (shape.size() == 1) shape_text.resize(shape_text.size() - 1);
  shape_text += ")";
  std::string dict = "{'descr': '" + descr +
                     "', 'fortran_order': " + (fortran_order ? "True" : "False") +
                     ", 'shape': " + shape_text + ", }";
  // The whole preamble is padded with spaces to a multiple of 64 bytes, ending in '\n'.
  const std::size_t prefix = major_version == 1 ? 10 : 12;
  const std::size_t total = (prefix + dict.size() + 1 + 63) / 64 * 64;
  dict.append(total - prefix - dict.size() - 1, ' ');
  dict += '\n';
  std::string out = "\x93NUMPY";
  out += static_cast<char>(major_version);
  out += '\0';
  const std::size_t len = dict.size();
  out += static_cast<char>(len & 0xff);
  out += static_cast<char>((len >> 8) & 0xff);
  if (major_version != 1) {
    out += static_cast<char>((len >> 16) & 0xff);
    out += static_cast<char>((len >> 24) & 0xff);
  }
  write_bytes(file, out + dict + data);
}

std::string read_bytes(const std::filesystem::path& file) {
  std::ifstream in(file, std::ios::binary);
  return std::string(std::istreambuf_iterator<char>(in), {});
}

void write_bytes(const std::filesystem::path& file, const std::string& bytes) {
  std::ofstream out(file, std::ios::binary | std::ios::trunc);
  out.write(bytes.data(), static_cast<std::streamsize>(bytes.size()));
}

}  // namespace unfurl::test
