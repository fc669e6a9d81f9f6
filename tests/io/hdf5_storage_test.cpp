// Tests of the one HDF5 reading path (io::H5Reader, used by read_points, describe_file and
// every graph and map reader) on files written by h5py 3.7 (Debian python3-h5py, run by
// /usr/bin/python3), the outside reference writer: storage that is missing must be refused
// by name instead of read as fill values, and the type, shape and filter guards hold for
// files we did not write. What h5py writes for each call is documented in its manual
// ("Virtual Datasets", "External links", create_dataset's `external` and `chunks`).
#include <catch2/catch.hpp>

#include <cstdlib>
#include <fstream>

#include "engine/error.hpp"
#include "io/file_description.hpp"
#include "io/hdf5_file.hpp"
#include "io/points_reader.hpp"
#include "tests/io/point_fixtures.hpp"

using namespace unfurl;
using namespace unfurl::io;
using namespace unfurl::test;
using Catch::Contains;

namespace {

// Runs a Python snippet with the working folder `dir` (h5py and numpy imported as h5py, np).
void run_python(const TempDir& dir, const std::string& code) {
  const auto script = dir / "write.py";
  std::ofstream(script) << "import h5py, numpy as np\n" << code;
  const std::string command =
      "cd '" + dir.path().string() + "' && /usr/bin/python3 '" + script.string() + "'";
  REQUIRE(std::system(command.c_str()) == 0);
}

}  // namespace

TEST_CASE("h5py files with missing storage are refused by name, never read as zeros",
          "[io][hdf5]") {
  TempDir dir;
  run_python(dir, R"(
x = np.arange(60, dtype='f8').reshape(20, 3) + 1
with h5py.File('src.h5', 'w') as f: f['data'] = x
lay = h5py.VirtualLayout(shape=(20, 3), dtype='f8')
lay[:] = h5py.VirtualSource('src.h5', 'data', shape=(20, 3))
with h5py.File('vds.h5', 'w') as f: f.create_virtual_dataset('v', lay)
half = h5py.VirtualLayout(shape=(20, 3), dtype='f8')
half[0:10] = h5py.VirtualSource('src.h5', 'data', shape=(20, 3))[0:10]
with h5py.File('half_vds.h5', 'w') as f: f.create_virtual_dataset('v', half)
with h5py.File('sparse.h5', 'w') as f:
    d = f.create_dataset('x', shape=(100, 3), chunks=(10, 3), dtype='f8')
    d[0:10] = 1.0
with h5py.File('full.h5', 'w') as f:
    d = f.create_dataset('x', shape=(100, 3), chunks=(10, 3), dtype='f8')
    d[:] = 2.0
with h5py.File('unwritten.h5', 'w') as f: f.create_dataset('x', shape=(20, 3), dtype='f8')
with h5py.File('elink.h5', 'w') as f:
    f['x'] = h5py.ExternalLink('absent.h5', '/data')
x.tofile('raw.bin')
with h5py.File('external.h5', 'w') as f:
    f.create_dataset('x', shape=(20, 3), dtype='f8', external=[('raw.bin', 0, 480)])
)");
  PointReadOptions named;
  // A value as the file holds it: the reader centres each column and records the centre.
  const auto as_read = [&named](const std::filesystem::path& file, std::size_t row) {
    const PointReadResult r = read_points(file, named);
    return static_cast<double>(r.points.row(row)[2]) + r.centres[2];
  };
  // Sound files of each kind read as written (the oracle: the values h5py was given).
  named.dataset = "/v";
  CHECK(as_read(dir / "vds.h5", 19) == 60.0);
  named.dataset = "/x";
  CHECK(as_read(dir / "full.h5", 99) == 2.0);
  CHECK(as_read(dir / "external.h5", 19) == 60.0);

  // A chunked dataset with 9 of its 10 chunks never written.
  CHECK_THROWS_KIND(read_points(dir / "sparse.h5"), DataError,
                    Contains("sparse.h5") && Contains("9 of its 10 chunks never written"));
  // Contiguous storage never allocated.
  CHECK_THROWS_KIND(read_points(dir / "unwritten.h5"), DataError,
                    Contains("unwritten.h5") && Contains("never written"));
  // A virtual dataset mapping only half of its elements.
  named.dataset = "/v";
  CHECK_THROWS_KIND(read_points(dir / "half_vds.h5", named), DataError,
                    Contains("maps 30 of its 60 elements"));
  // An external link to a missing file.
  named.dataset = "/x";
  CHECK_THROWS_KIND(read_points(dir / "elink.h5", named), IoError,
                    Contains("elink.h5") && Contains("external link to missing file 'absent.h5'"));
  // The raw data file of external storage, and the source of a virtual dataset, removed.
  std::filesystem::remove(dir / "raw.bin");
  CHECK_THROWS_KIND(read_points(dir / "external.h5", named), IoError,
                    Contains("external raw data file") && Contains("raw.bin' is missing"));
  std::filesystem::remove(dir / "src.h5");
  named.dataset = "/v";
  CHECK_THROWS_KIND(read_points(dir / "vds.h5", named), IoError,
                    Contains("virtual dataset source file") && Contains("src.h5' is missing"));
  // The same guards for every other reader: H5Reader::read and inspect's description.
  const H5Reader sparse(dir / "sparse.h5");
  CHECK_THROWS_KIND(sparse.read<double>("/x"), DataError, Contains("never written"));
  const FileDescription described = describe_file(dir / "vds.h5");
  REQUIRE(described.arrays.size() == 1);
  CHECK(described.arrays[0].storage == "virtual");
}

TEST_CASE("h5py files: type, shape and filter guards of the one HDF5 reader", "[io][hdf5]") {
  TempDir dir;
  run_python(dir, R"(
with h5py.File('kinds.h5', 'w') as f:
    f['names'] = np.array([b'a', b'b'])
    f['pairs'] = np.zeros(4, dtype=[('a', 'i4'), ('b', 'f8')])
    f['cube'] = np.zeros((2, 3, 4))
    f.create_dataset('lzf', data=np.ones((8, 2)), compression='lzf')
    f['g/int16'] = np.arange(12, dtype='>i2').reshape(6, 2)
    f['hard'] = f['g/int16']
    f['soft'] = h5py.SoftLink('/g/int16')
)");
  const H5Reader in(dir / "kinds.h5");
  CHECK_THROWS_KIND(in.read<double>("/names"), DataError, Contains("string values"));
  CHECK_THROWS_KIND(in.read<double>("/pairs"), DataError, Contains("compound values"));
  // lzf is h5py's own filter (id 32000); this HDF5 library cannot decode it.
  CHECK_THROWS_KIND(in.read<double>("/lzf"), DataError, Contains("cannot decode"));
  CHECK(in.read<std::int64_t>("/g/int16").at(11) == 11);  // big-endian int16, as written
  CHECK(in.require_rank("/cube", 3).dims == std::vector<std::size_t>{2, 3, 4});
  // One listing: each object once, hard links not repeated, soft links not followed.
  CHECK(in.datasets_under("/") ==
        std::vector<std::string>{"/cube", "/g/int16", "/lzf", "/names", "/pairs"});
  PointReadOptions named;
  named.dataset = "/cube";
  CHECK_THROWS_KIND(read_points(dir / "kinds.h5", named), DataError, Contains("3-D"));
  named.dataset = "/soft";  // a soft link to a dataset is followed when named
  CHECK(read_points(dir / "kinds.h5", named).points.rows == 6);
}
