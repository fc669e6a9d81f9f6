#include "io/graph_input.hpp"

#include <catch2/catch.hpp>
#include <cmath>
#include <cstring>

#include "engine/error.hpp"
#include "io/hdf5_file.hpp"
#include "tests/io/temp_folder.hpp"

using unfurl::io::DistanceMatrixOptions;
using unfurl::io::EdgeListOptions;
using unfurl::io::read_edge_list;
using unfurl::io::read_partial_distances;

namespace {

// An .npy file by hand: magic, version 1.0, header length, dict padded to 64 bytes.
std::string npy(const std::string& descr, const std::string& order, const std::string& shape,
                const std::string& payload) {
  std::string dict =
      "{'descr': '" + descr + "', 'fortran_order': " + order + ", 'shape': " + shape + ", }";
  while ((10 + dict.size() + 1) % 64) dict += ' ';
  dict += '\n';
  std::string out = "\x93NUMPY";
  out += '\x01';
  out += '\x00';
  out += static_cast<char>(dict.size() & 0xff);
  out += static_cast<char>(dict.size() >> 8);
  return out + dict + payload;
}

template <class T>
std::string raw(const std::vector<T>& v) {
  return std::string(reinterpret_cast<const char*>(v.data()), v.size() * sizeof(T));
}

}  // namespace

TEST_CASE("edge list CSV with header, comments, blanks and each delimiter", "[graph_input]") {
  unfurl::test::TempFolder dir;
  unfurl::test::write_bytes(dir / "e.csv",
                            "# buoys linked by cable\r\n"
                            "i,j,length\r\n"
                            "0,1,2.5\r\n"
                            "\n"
                            "  1 , 3 , 0.125\n"
                            "3,2,1e-3\n"
                            "# a zero-length self loop is dropped\n"
                            "2,2,0\n"
                            "4.0,0,7");  // last line without newline; id written as 4.0
  const auto e = read_edge_list(dir / "e.csv");
  CHECK(e.nodes == 5);
  CHECK(e.from == std::vector<unfurl::NodeId>{0, 1, 3, 4});
  CHECK(e.to == std::vector<unfurl::NodeId>{1, 3, 2, 0});
  CHECK(e.length == std::vector<float>{2.5f, 0.125f, 1e-3f, 7.0f});
  CHECK(e.dropped_self_loops == 1);
  EdgeListOptions o;
  o.nodes = 10;
  CHECK(read_edge_list(dir / "e.csv", o).nodes == 10);
  // One delimiter per file, sniffed from the first content line as for points.
  for (const std::string d : {";", "\t", " ", "  "}) {
    CAPTURE(d);
    unfurl::test::write_bytes(dir / "d.txt", "\xEF\xBB\xBF# tide gauges\n0" + d + "1" + d +
                                                 "2.5\n1" + d + "3" + d + "0.125\n");
    const auto t = read_edge_list(dir / "d.txt");
    CHECK(t.from == std::vector<unfurl::NodeId>{0, 1});
    CHECK(t.to == std::vector<unfurl::NodeId>{1, 3});
    CHECK(t.length == std::vector<float>{2.5f, 0.125f});
  }
}

TEST_CASE("edge list CSV crossing read blocks keeps every edge", "[graph_input]") {
  unfurl::test::TempFolder dir;
  std::string text = "#" + std::string(3 << 20, 'c') + "\n";  // a comment longer than a block
  const std::size_t edges = 120000;                           // ~2 MB: several blocks
  for (std::size_t k = 0; k < edges; ++k)
    text += std::to_string(k) + "," + std::to_string(k + 1) + "," + std::to_string(k % 97) + ".5\n";
  unfurl::test::write_bytes(dir / "big.csv", text);
  const auto e = read_edge_list(dir / "big.csv");
  REQUIRE(e.from.size() == edges);
  CHECK(e.nodes == edges + 1);
  for (std::size_t k = 0; k < edges; k += 997) {
    CHECK(e.from[k] == k);
    CHECK(e.to[k] == k + 1);
    CHECK(e.length[k] == static_cast<float>(k % 97) + 0.5f);
  }
}

TEST_CASE("edge list CSV errors name the file and line", "[graph_input]") {
  unfurl::test::TempFolder dir;
  struct Case {
    const char* body;
    const char* message;
  };
  const std::vector<Case> cases = {
      {"0,1,1\n1,2,-0.5\n", "line 2: length -0.5 is negative"},
      {"0,1,nan\n", "line 1: length nan is not finite"},
      {"0,1,inf\n", "line 1: length inf is not finite"},
      {"0,1,1e300\n", "line 1: length 1.0000000000000001e+300 does not fit float32"},
      {"0,1,1\n-1,2,1\n", "line 2: node id i = -1 is negative"},
      {"0,2.5,1\n", "line 1: node id j = 2.5 is not an integer"},
      {"0,3000000000,1\n", "line 1: node id j = 3000000000 is too large"},
      {"0,1,1\n3,3,2\n", "line 2: self loop 3 -- 3 with length 2"},
      {"0,1,1\n0,1\n", "line 2: expected 3 fields (i, j, length), got 2"},
      {"0,1,1,4\n", "line 1: expected 3 fields"},
      {"# c\ni,j\n0,1,1\n", "line 2: header has 2 fields"},
      {"0,1,1\nx,1,1\n", "line 2: field 1 'x' is not a number"},
      {"0,1,1\n0,1,\n", "line 2: field 3 '' is not a number"},
  };
  for (const Case& c : cases) {
    CAPTURE(c.body);
    unfurl::test::write_bytes(dir / "bad.csv", c.body);
    CHECK_THROWS_AS(read_edge_list(dir / "bad.csv"), unfurl::DataError);
    CHECK_THROWS_WITH(read_edge_list(dir / "bad.csv"),
                      Catch::Contains("bad.csv: ") && Catch::Contains(c.message));
  }
  EdgeListOptions o;
  o.nodes = 3;
  unfurl::test::write_bytes(dir / "bad.csv", "0,1,1\n1,3,1\n");
  CHECK_THROWS_WITH(read_edge_list(dir / "bad.csv", o),
                    Catch::Contains("line 2: node id j = 3 is not below the node count 3"));
  CHECK_THROWS_AS(read_edge_list(dir / "absent.csv"), unfurl::MissingInputError);
  o.format = unfurl::io::GraphInputFormat::npy;
  CHECK_THROWS_AS(read_edge_list(dir / "bad.csv", o), unfurl::OptionError);
}

TEST_CASE("edge list from HDF5, as three datasets or one table", "[graph_input]") {
  unfurl::test::TempFolder dir;
  {
    unfurl::io::H5Writer out(dir / "e.h5");
    out.write("/edges/i", std::vector<std::int64_t>{0, 1, 2}, {3});
    out.write("/edges/j", std::vector<std::uint32_t>{1, 2, 0}, {3});
    out.write("/edges/length", std::vector<double>{0.5, 1.5, 2.5}, {3});
    out.write("/cables", std::vector<double>{0, 4, 1.0, 4, 2, 3.0}, {2, 3});
    out.write("/wide", std::vector<double>{0, 4, 1.0, 9}, {1, 4});
    out.write("/frac", std::vector<double>{0, 4.5, 1.0}, {1, 3});
    out.write("/short", std::vector<double>{1.0, 2.0}, {2});
    out.close();
  }
  const auto e = read_edge_list(dir / "e.h5");
  CHECK(e.nodes == 3);
  CHECK(e.from == std::vector<unfurl::NodeId>{0, 1, 2});
  CHECK(e.to == std::vector<unfurl::NodeId>{1, 2, 0});
  CHECK(e.length == std::vector<float>{0.5f, 1.5f, 2.5f});
  EdgeListOptions o;
  o.table_dataset = "/cables";
  const auto t = read_edge_list(dir / "e.h5", o);
  CHECK(t.nodes == 5);
  CHECK(t.from == std::vector<unfurl::NodeId>{0, 4});
  CHECK(t.to == std::vector<unfurl::NodeId>{4, 2});
  CHECK(t.length == std::vector<float>{1.0f, 3.0f});
  o.table_dataset = "/wide";
  CHECK_THROWS_WITH(read_edge_list(dir / "e.h5", o), Catch::Contains("/wide: has 4 columns"));
  o.table_dataset = "/frac";
  CHECK_THROWS_WITH(read_edge_list(dir / "e.h5", o),
                    Catch::Contains("/frac: edge 0: node id j = 4.5 is not an integer"));
  o.table_dataset = "/missing";
  CHECK_THROWS_AS(read_edge_list(dir / "e.h5", o), unfurl::MissingInputError);
  EdgeListOptions lengths;
  lengths.length_dataset = "/short";
  CHECK_THROWS_WITH(read_edge_list(dir / "e.h5", lengths), Catch::Contains("must match"));
  lengths.length_dataset = "no-slash";
  CHECK_THROWS_AS(read_edge_list(dir / "e.h5", lengths), unfurl::OptionError);
}

TEST_CASE("partial distances from CSV with missing entries", "[graph_input]") {
  unfurl::test::TempFolder dir;
  unfurl::test::write_bytes(dir / "d.csv",
                            "# distances between four buoys, km\n"
                            "0, 1.5, , nan\n"
                            "1.5, 0, 2, -1\n"
                            ",2,,3\n"
                            "NaN,-1,3,0\n");
  DistanceMatrixOptions o;
  o.missing_value = -1.0;
  const auto d = read_partial_distances(dir / "d.csv", o);
  REQUIRE(d.n == 4);
  const float nan = std::nanf("");
  const std::vector<float> want = {0,   1.5f, nan, nan, 1.5f, 0,   2, nan,
                                   nan, 2,    0,   3,   nan,  nan, 3, 0};
  for (std::size_t k = 0; k < 16; ++k) {
    CAPTURE(k);
    if (std::isnan(want[k]))
      CHECK(std::isnan(d.values[k]));
    else
      CHECK(d.values[k] == want[k]);
  }
  CHECK(d.missing_pairs == 3);  // (0,2), (0,3), (1,3)
  // Without the sentinel, -1 is a negative distance.
  CHECK_THROWS_WITH(read_partial_distances(dir / "d.csv"),
                    Catch::Contains("d.csv: entry (1, 3) = -1 is negative"));
}

TEST_CASE("partial distance errors name the entries", "[graph_input]") {
  unfurl::test::TempFolder dir;
  struct Case {
    const char* body;
    const char* message;
  };
  const std::vector<Case> cases = {
      {"0,1\n1,0\n2,2\n", "line 3: more rows than the 2 columns"},
      {"0,1,2\n1,0,3\n", "is 2 x 3, not square"},
      {"0,1\n1\n", "line 2: has 1 fields, earlier rows 2"},
      {"0,1\n2,0\n", "not symmetric: entry (0, 1) = 1 but entry (1, 0) = 2"},
      {"0,1\n,0\n", "not symmetric: entry (0, 1) = 1 but entry (1, 0) = missing"},
      {"0.5,1\n1,0\n", "diagonal entry (0, 0) = 0.5, must be 0"},
      {"0,inf\ninf,0\n", "entry (0, 1) = inf is not finite"},
      {"0,x\n1,0\n", "line 1: field 2 'x' is not a number"},
  };
  for (const Case& c : cases) {
    CAPTURE(c.body);
    unfurl::test::write_bytes(dir / "bad.csv", c.body);
    CHECK_THROWS_AS(read_partial_distances(dir / "bad.csv"), unfurl::DataError);
    CHECK_THROWS_WITH(read_partial_distances(dir / "bad.csv"),
                      Catch::Contains("bad.csv") && Catch::Contains(c.message));
  }
  // Within the relative tolerance the pair is accepted and made exactly symmetric.
  unfurl::test::write_bytes(dir / "near.csv", "0,1000\n1000.0001,nan\n");
  const auto near = read_partial_distances(dir / "near.csv");
  CHECK(near.values[1] == near.values[2]);
  CHECK(near.values[3] == 0.0f);  // a missing diagonal entry is 0
  DistanceMatrixOptions strict;
  strict.symmetry_tolerance = 0.0;
  CHECK_THROWS_AS(read_partial_distances(dir / "near.csv", strict), unfurl::DataError);
  strict.symmetry_tolerance = -1;
  CHECK_THROWS_WITH(read_partial_distances(dir / "near.csv", strict),
                    Catch::Contains("DistanceMatrixOptions.symmetry_tolerance"));
}

TEST_CASE("partial distances from HDF5 and NPY", "[graph_input]") {
  unfurl::test::TempFolder dir;
  const double nan = std::nan("");
  const std::vector<double> m = {0, 2, nan, 2, 0, 4, nan, 4, 0};
  {
    unfurl::io::H5Writer out(dir / "d.h5");
    out.write("/distances", m, {3, 3});
    out.write("/other", std::vector<float>{0, 1, 1, 0, 5, 5}, {2, 3});
    out.close();
  }
  const auto h = read_partial_distances(dir / "d.h5");
  CHECK(h.n == 3);
  CHECK(h.missing_pairs == 1);
  CHECK(h.values[5] == 4.0f);
  DistanceMatrixOptions o;
  o.dataset = "/other";
  CHECK_THROWS_WITH(read_partial_distances(dir / "d.h5", o),
                    Catch::Contains("d.h5: /other: distance matrix is 2 x 3, not square"));

  unfurl::test::write_bytes(dir / "d.npy", npy("<f8", "False", "(3, 3)", raw(m)));
  const auto p = read_partial_distances(dir / "d.npy");
  CHECK(p.n == 3);
  CHECK(p.missing_pairs == 1);
  CHECK(p.values[1] == 2.0f);
  const std::vector<float> f = {0, 1, 1, 0};
  unfurl::test::write_bytes(dir / "f.npy", npy("<f4", "False", "(2, 2)", raw(f)));
  CHECK(read_partial_distances(dir / "f.npy").values == f);

  // The NPY reader of the point sets: Fortran order and integer types too.
  const std::vector<float> t = {0, 2, 1, 0};  // (0,1) = 1 and (1,0) = 2 in Fortran order
  unfurl::test::write_bytes(dir / "t.npy", npy("<f4", "True", "(2, 2)", raw(t)));
  CHECK_THROWS_WITH(read_partial_distances(dir / "t.npy"),
                    Catch::Contains("entry (0, 1) = 1 but entry (1, 0) = 2"));
  const std::vector<std::int64_t> ints = {0, 3, 3, 0};
  unfurl::test::write_bytes(dir / "i.npy", npy("<i8", "False", "(2, 2)", raw(ints)));
  CHECK(read_partial_distances(dir / "i.npy").values == std::vector<float>{0, 3, 3, 0});

  const std::vector<std::pair<std::string, const char*>> bad = {
      {npy("<f4", "False", "(4,)", raw(f)), "is 1-D"},
      {npy("<f4", "False", "(2, 2)", raw(f) + "junk"), "4 bytes of trailing data"},
      {npy("<c8", "False", "(2, 2)", raw(f) + raw(f)), "'<c8' is not supported"},
      {npy("<f4", "Maybe", "(2, 2)", raw(f)), "malformed NPY header"},
      {"not numpy at all", "not an NPY file"},
  };
  for (const auto& [bytes, message] : bad) {
    CAPTURE(message);
    unfurl::test::write_bytes(dir / "bad.npy", bytes);
    CHECK_THROWS_AS(read_partial_distances(dir / "bad.npy"), unfurl::DataError);
    CHECK_THROWS_WITH(read_partial_distances(dir / "bad.npy"), Catch::Contains(message));
  }
  // Fewer bytes than the shape needs: a truncated file, an I/O error as for points.
  unfurl::test::write_bytes(dir / "cut.npy", npy("<f4", "False", "(2, 3)", raw(f)));
  CHECK_THROWS_AS(read_partial_distances(dir / "cut.npy"), unfurl::IoError);
  CHECK_THROWS_WITH(read_partial_distances(dir / "cut.npy"), Catch::Contains("truncated"));
}

TEST_CASE("edge lists: content decides the format; huge ids are refused before allocating",
          "[graph_input]") {
  unfurl::test::TempFolder dir;
  // NPY bytes under a .csv name: the signature wins, and the message names the file.
  const std::vector<float> f = {0, 1, 1, 0};
  unfurl::test::write_bytes(dir / "e.csv", npy("<f4", "False", "(2, 2)", raw(f)));
  CHECK_THROWS_AS(read_edge_list(dir / "e.csv"), unfurl::DataError);
  CHECK_THROWS_WITH(read_edge_list(dir / "e.csv"), Catch::Contains("e.csv: holds an NPY array"));
  // One id of 2^31 - 2 would mean two billion nodes: about 137 GB at 64 bytes a node.
  unfurl::test::write_bytes(dir / "big.csv", "0,1,1\n1,2147483646,1\n");
  CHECK_THROWS_AS(read_edge_list(dir / "big.csv"), unfurl::ResourceError);
  CHECK_THROWS_WITH(read_edge_list(dir / "big.csv"),
                    Catch::Contains("big.csv: node ids up to 2147483646") &&
                        Catch::Contains("137.4 GB") && Catch::Contains("renumber the ids"));
  unfurl::test::write_bytes(dir / "long.csv", "0,1," + std::string(400, '9') + "\n");
  CHECK_THROWS_WITH(
      read_edge_list(dir / "long.csv"),
      Catch::Contains("long.csv: line 1: field 3") && Catch::Contains("float64 range"));
  unfurl::test::write_bytes(dir / "nul.csv", std::string("0,1,1\n\0", 7));
  CHECK_THROWS_WITH(read_edge_list(dir / "nul.csv"),
                    Catch::Contains("nul.csv: line 2") && Catch::Contains("NUL byte"));
}

TEST_CASE("graph input readers stop on request", "[graph_input]") {
  unfurl::test::TempFolder dir;
  std::string text;
  for (int k = 0; k < (1 << 20) + 5; ++k) text += "0,1,1\n";
  unfurl::test::write_bytes(dir / "e.csv", text);
  std::atomic<bool> stop{true};
  EdgeListOptions o;
  o.stop.flag = &stop;
  CHECK_THROWS_AS(read_edge_list(dir / "e.csv", o), unfurl::InterruptedError);
  stop = false;
  CHECK(read_edge_list(dir / "e.csv", o).from.size() == (1u << 20) + 5);
  unfurl::test::write_bytes(dir / "d.csv", "0,1\n1,0\n");
  DistanceMatrixOptions d;
  d.stop.flag = &stop;
  stop = true;
  CHECK_THROWS_AS(read_partial_distances(dir / "d.csv", d), unfurl::InterruptedError);
}
