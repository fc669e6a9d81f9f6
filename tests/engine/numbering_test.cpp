#include "engine/numbering.hpp"

#include <catch2/catch.hpp>
#include <vector>

#include "engine/error.hpp"

using namespace unfurl;

namespace {
constexpr NodeId kAbsent = Numbering::absent;

std::vector<NodeId> entries(const Numbering& n) {
  return {n.values().begin(), n.values().end()};
}
}  // namespace

// The expectations below follow from the definitions of composition and inversion of maps
// between finite sets (analytic ground truth), worked by hand for each small case.

TEST_CASE("numbering: a permutation composed with its inverse is the identity", "[numbering]") {
  const Numbering p({2, 0, 3, 1}, 4);  // 0->2, 1->0, 2->3, 3->1
  const Numbering inv = p.inverse();
  CHECK(entries(inv) == std::vector<NodeId>{1, 3, 0, 2});
  CHECK(entries(p.then(inv)) == entries(Numbering::identity(4)));
  CHECK(entries(inv.then(p)) == entries(Numbering::identity(4)));
  CHECK(p.present().size() == 4);
  CHECK(p.missing().empty());
}

TEST_CASE("numbering: absent entries propagate through composition", "[numbering]") {
  const Numbering rows_to_nodes({0, 1, 1, kAbsent, 2}, 3);  // row 3 has no node
  const Numbering nodes_to_kept({kAbsent, 0, 1}, 2);        // node 0 was dropped
  const Numbering rows_to_kept = rows_to_nodes.then(nodes_to_kept);
  CHECK(entries(rows_to_kept) == std::vector<NodeId>{kAbsent, 0, 0, kAbsent, 1});
  CHECK(rows_to_kept.target_size() == 2);
  CHECK(rows_to_kept.present() == std::vector<std::size_t>{1, 2, 4});
  CHECK(rows_to_kept.missing() == std::vector<std::size_t>{0, 3});
  CHECK_FALSE(rows_to_kept.has(0));
  CHECK(rows_to_kept.has(4));
}

TEST_CASE("numbering: the inverse of a many-to-one map picks the first member", "[numbering]") {
  // Duplicate rows 1 and 2 share node 1: node 1's representative is row 1, node 3 has none.
  const Numbering rows_to_nodes({0, 1, 1, 2, kAbsent}, 4);
  const Numbering first = rows_to_nodes.inverse();
  CHECK(entries(first) == std::vector<NodeId>{0, 1, 3, kAbsent});
  CHECK(first.target_size() == 5);
}

TEST_CASE("numbering: restriction keeps the picked elements in the given order", "[numbering]") {
  const Numbering n({4, kAbsent, 2, 0, 1}, 5);
  const std::vector<std::size_t> picked{3, 0, 2};
  CHECK(entries(n.restricted(picked)) == std::vector<NodeId>{0, 4, 2});
  const std::vector<std::size_t> outside{5};
  CHECK_THROWS_AS(n.restricted(outside), InternalError);
}

TEST_CASE("numbering: entries outside the target space and mismatched chains are refused",
          "[numbering]") {
  CHECK_THROWS_AS(Numbering({0, 3}, 3), InternalError);
  CHECK_NOTHROW(Numbering({0, kAbsent}, 1));
  CHECK_THROWS_AS(Numbering::identity(3).then(Numbering::identity(4)), InternalError);
}

TEST_CASE("numbering: gather_rows copies the named rows", "[numbering]") {
  PointSet p(3, 2);
  for (std::size_t i = 0; i < 6; ++i) p.values[i] = static_cast<float>(i);
  const PointSet g = gather_rows(p, Numbering({2, 0, 2, 1}, 3));
  REQUIRE(g.rows == 4);
  CHECK(g.values == std::vector<float>{4, 5, 0, 1, 4, 5, 2, 3});
  CHECK_THROWS_AS(gather_rows(p, Numbering({0, kAbsent}, 3)), InternalError);
}

TEST_CASE("numbering: gather_columns permutes in place and widens into a new array",
          "[numbering]") {
  DistanceRows d;
  d.rows = 2;
  d.cols = 3;
  d.sources = {0, 2};
  d.values = {10, 11, 12, 20, 21, 22};
  const float* before = d.values.data();
  gather_columns(d, Numbering({2, 0, 1}, 3));
  CHECK(d.values == RowValues{12, 10, 11, 22, 20, 21});
  // Same width: rewritten in place, so the rows exist once (the memory contract).
  CHECK(d.values.data() == before);
  CHECK(d.sources == std::vector<NodeId>{0, 2});
  gather_columns(d, Numbering({0, 0, 2, 1}, 3));  // a duplicate column widens the rows
  CHECK(d.cols == 4);
  CHECK(d.values == RowValues{12, 12, 11, 10, 22, 22, 21, 20});
}
