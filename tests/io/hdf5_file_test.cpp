#include "io/hdf5_file.hpp"

#include <catch2/catch.hpp>
#include <cmath>
#include <cstdint>
#include <limits>

#include "engine/error.hpp"
#include "tests/io/temp_folder.hpp"

using unfurl::io::H5Kind;
using unfurl::io::H5Reader;
using unfurl::io::H5Writer;

TEST_CASE("hdf5 datasets round trip by type and shape", "[hdf5]") {
  unfurl::test::TempFolder dir;
  const auto file = dir / "a.h5";
  const std::vector<float> f = {1.5f, -2.25f, 3.0e-38f, 7.0f, 0.1f, 1e30f};
  const std::vector<double> d = {0.1, -1e300, 5e-324, 2.0};
  const std::vector<std::int64_t> i = {-(std::int64_t{1} << 62), 0, 42};
  const std::vector<std::uint32_t> u = {0, 4294967295u};
  {
    H5Writer out(file);
    out.write("/deep/group/f", f, {2, 3});
    out.write("/d", d, {4}, {6});  // chunked and deflated
    out.write("/i", i, {3});
    out.write("/u", u, {2});
    out.write("/scalar", std::vector<double>{9.5}, {});
    out.write("/empty", std::vector<float>{}, {0, 3});
    out.close();
  }
  H5Reader in(file);
  CHECK(in.has_dataset("/deep/group/f"));
  CHECK(in.has_group("/deep/group"));
  CHECK_FALSE(in.has("/deep/nothing/f"));
  CHECK(in.info("/deep/group/f").dims == std::vector<std::size_t>{2, 3});
  CHECK(in.info("/deep/group/f").kind == H5Kind::floating);
  CHECK(in.read<float>("/deep/group/f") == f);
  CHECK(in.read<double>("/d") == d);
  CHECK(in.read<std::int64_t>("/i") == i);
  CHECK(in.read<std::uint32_t>("/u") == u);
  CHECK(in.info("/scalar").dims.empty());
  CHECK(in.read<double>("/scalar") == std::vector<double>{9.5});
  CHECK(in.read<float>("/empty").empty());
  CHECK(in.info("/empty").dims == std::vector<std::size_t>{0, 3});
  // Widening conversions are exact.
  CHECK(in.read<double>("/i") == std::vector<double>{-std::ldexp(1.0, 62), 0.0, 42.0});
  CHECK(in.read<double>("/deep/group/f")[1] == -2.25);
  CHECK(in.datasets_under("/") ==
        std::vector<std::string>{"/d", "/deep/group/f", "/empty", "/i", "/scalar", "/u"});
}

TEST_CASE("hdf5 reader refuses conversions that change values", "[hdf5]") {
  unfurl::test::TempFolder dir;
  const auto file = dir / "c.h5";
  {
    H5Writer out(file);
    out.write("/big", std::vector<std::int64_t>{1, std::int64_t{1} << 40}, {2});
    out.write("/negative", std::vector<std::int64_t>{-1}, {1});
    out.write("/huge", std::vector<double>{1e300}, {1});
    out.write("/nan", std::vector<double>{std::nan(""), 1.0}, {2});
    out.write("/fraction", std::vector<double>{2.5}, {1});
    out.close();
  }
  H5Reader in(file);
  CHECK_THROWS_AS(in.read<std::uint32_t>("/big"), unfurl::DataError);
  CHECK_THROWS_AS(in.read<std::uint32_t>("/negative"), unfurl::DataError);
  CHECK_THROWS_AS(in.read<float>("/huge"), unfurl::DataError);
  CHECK_THROWS_AS(in.read<std::int64_t>("/fraction"), unfurl::DataError);
  const auto nan = in.read<float>("/nan");  // NaN marks missing values: it must pass
  CHECK(std::isnan(nan[0]));
  CHECK(nan[1] == 1.0f);
  CHECK_THROWS_AS(in.read<float>("/absent"), unfurl::MissingInputError);
  CHECK_THROWS_AS(in.read<float>("/"), unfurl::DataError);  // a group, not a dataset
  CHECK_THROWS_AS(in.require_rank("/big", 2), unfurl::DataError);
  CHECK_THROWS_WITH(in.require_rank("/big", 2),
                    Catch::Contains("c.h5: /big") && Catch::Contains("expected 2 dimension"));
}

TEST_CASE("hdf5 attributes round trip", "[hdf5]") {
  unfurl::test::TempFolder dir;
  const auto file = dir / "attr.h5";
  const std::vector<double> curve = {0.5, 0.25, -1.0};
  const std::vector<std::int64_t> ids = {3, -4};
  {
    H5Writer out(file);
    out.write("/x", std::vector<float>{1.0f}, {1});
    out.set_string_attribute("/", "name", "unfolded ocean buoys \xc3\xa9");
    out.set_double_attribute("/x", "k", 0.125);
    out.set_int_attribute("/", "seed", -7);
    out.set_int_attribute("/", "seed", 9);  // replaced, not duplicated
    out.set_doubles_attribute("/x", "curve", curve);
    out.set_ints_attribute("/x", "ids", ids);
    out.close();
  }
  H5Reader in(file);
  CHECK(in.string_attribute("/", "name") == "unfolded ocean buoys \xc3\xa9");
  CHECK(in.int_attribute("/", "seed") == 9);
  CHECK(in.double_attribute("/x", "k") == 0.125);
  CHECK(in.doubles_attribute("/x", "curve") == curve);
  CHECK(in.ints_attribute("/x", "ids") == ids);
  CHECK(in.attribute_names("/") == std::vector<std::string>{"name", "seed"});
  CHECK(in.attribute_kind("/x", "curve") == H5Kind::floating);
  CHECK(in.attribute_size("/x", "curve") == 3);
  CHECK_THROWS_AS(in.int_attribute("/x", "k"), unfurl::DataError);
  CHECK_THROWS_AS(in.string_attribute("/", "seed"), unfurl::DataError);
  CHECK_THROWS_AS(in.int_attribute("/", "absent"), unfurl::MissingInputError);
}

TEST_CASE("hdf5 reader names missing and damaged files", "[hdf5]") {
  unfurl::test::TempFolder dir;
  CHECK_THROWS_AS(H5Reader(dir / "none.h5"), unfurl::MissingInputError);
  CHECK_THROWS_AS(H5Reader(dir.path()), unfurl::MissingInputError);
  unfurl::test::write_bytes(dir / "text.h5", "this is not an HDF5 file\n");
  CHECK_THROWS_AS(H5Reader(dir / "text.h5"), unfurl::IoError);
  CHECK_THROWS_WITH(H5Reader(dir / "text.h5"), Catch::Contains("text.h5"));
  CHECK_THROWS_AS(H5Writer(dir / "no-such-folder" / "x.h5"), unfurl::OutputError);
}
