#include "engine/row_storage.hpp"

#include <catch2/catch.hpp>
#include <cstdint>
#include <numeric>
#include <vector>

#include "engine/geodesic.hpp"
#include "tests/test_util.hpp"

using namespace unfurl;

// Expectations: the allocator contract of the C++ standard ([allocator.requirements]) and
// hand-worked values; the huge-page alignment is this module's own promise.
TEST_CASE("row storage: large blocks are aligned to 2 MiB, small ones are ordinary",
          "[row_storage]") {
  constexpr std::size_t kHuge = std::size_t{2} << 20;
  RowValues large(kHuge / sizeof(float) + 3);  // just over one huge page
  CHECK(reinterpret_cast<std::uintptr_t>(large.data()) % kHuge == 0);
  // Written in full, then read back: every value as written, at both ends of the block.
  std::iota(large.begin(), large.end(), 0.0f);
  CHECK(large.front() == 0.0f);
  CHECK(large.back() == static_cast<float>(large.size() - 1));
  RowValues small(5);
  std::iota(small.begin(), small.end(), 1.0f);
  CHECK(small == RowValues{1, 2, 3, 4, 5});
}

// Expectations: std::vector's contract ([vector.capacity]: no reallocation while the size stays
// within the reserved capacity), so the advised pages are the ones the values land in.
TEST_CASE("row storage: huge-page reservation keeps the block the values are written to",
          "[row_storage]") {
  constexpr std::size_t kHuge = std::size_t{2} << 20;
  std::vector<std::uint32_t> ids;
  detail::reserve_huge_pages(ids, 3 * kHuge / sizeof(std::uint32_t) + 7);
  REQUIRE(ids.capacity() >= 3 * kHuge / sizeof(std::uint32_t) + 7);
  const std::uint32_t* block = ids.data();
  ids.resize(ids.capacity());
  CHECK(ids.data() == block);
  CHECK(ids.front() == 0u);  // value-initialised as ever
  CHECK(ids.back() == 0u);
  std::iota(ids.begin(), ids.end(), 0u);
  CHECK(ids.back() == static_cast<std::uint32_t>(ids.size() - 1));
  // Unaligned, shorter than a page, empty: advice or nothing, never a failure.
  detail::advise_huge_pages(ids.data() + 1, 100);
  detail::advise_huge_pages(nullptr, 0);
  CHECK(ids[1] == 1u);
}

TEST_CASE("row storage: values given explicitly are kept, copies and moves keep them",
          "[row_storage]") {
  RowValues filled(4, 2.5f);  // an explicit value still initialises
  CHECK(filled == RowValues{2.5f, 2.5f, 2.5f, 2.5f});
  filled.push_back(-1.0f);
  const RowValues copy = filled;
  CHECK(copy == filled);
  const float* block = filled.data();
  const RowValues moved = std::move(filled);
  CHECK(moved.data() == block);  // the same allocator type always equal: moves take the block
  CHECK(moved == copy);
}

TEST_CASE("row storage: geodesic rows in unset storage equal the same rows computed twice",
          "[row_storage]") {
  // A path graph 0-1-2-...-9 with unit edges: row s holds |s - v| (analytic ground truth).
  // The rows' storage starts unset, so a value the kernel forgot to write would show here.
  const std::size_t n = 10;
  std::vector<test::Edge> edges;
  for (NodeId v = 0; v + 1 < n; ++v) edges.push_back({v, v + 1, 1.0f});
  const NeighbourGraph g = test::graph_from_edges(n, edges);
  const std::vector<NodeId> sources{0, 4, 9};
  const GeodesicResult r = geodesic_rows(g, {std::span<const NodeId>(sources)});
  REQUIRE(r.rows.values.size() == sources.size() * n);
  for (std::size_t s = 0; s < sources.size(); ++s)
    for (std::size_t v = 0; v < n; ++v)
      CHECK(r.rows.row(s)[v] ==
            static_cast<float>(v > sources[s] ? v - sources[s] : sources[s] - v));
}
