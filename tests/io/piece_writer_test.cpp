#include "io/detail/piece_writer.hpp"

#include <unistd.h>

#include <catch2/catch.hpp>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <iterator>
#include <vector>

#include "io/work_folder.hpp"
#include "tests/io/temp_folder.hpp"

using namespace unfurl;
namespace fs = std::filesystem;

namespace {

std::vector<std::byte> bytes_of(const fs::path& file) {
  std::ifstream in(file, std::ios::binary);
  std::vector<char> chars((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
  std::vector<std::byte> out(chars.size());
  std::memcpy(out.data(), chars.data(), chars.size());
  return out;
}

void write_file(const fs::path& file, const std::vector<std::byte>& bytes) {
  std::ofstream(file, std::ios::binary)
      .write(reinterpret_cast<const char*>(bytes.data()),
             static_cast<std::streamsize>(bytes.size()));
}

std::vector<std::byte> pattern(std::size_t n, unsigned seed) {
  std::vector<std::byte> out(n);
  for (std::size_t i = 0; i < n; ++i) out[i] = static_cast<std::byte>((i * 131 + seed) >> 3);
  return out;
}

std::string hex(std::uint64_t v) {
  char text[17];
  std::snprintf(text, sizeof text, "%016llx", static_cast<unsigned long long>(v));
  return text;
}

// A file of `size` bytes whose lent ranges hold zeros (as the library leaves its holes), the
// memory lent for them, and the bytes the finished piece must hold.
struct Holed {
  std::vector<std::byte> on_disk, expected;
  std::vector<std::vector<std::byte>> memory;
  std::vector<io::detail::LentBytes> lent;
};

Holed holed(std::size_t size, const std::vector<std::pair<std::size_t, std::size_t>>& ranges) {
  Holed h;
  h.expected = pattern(size, 5);
  h.on_disk = h.expected;
  h.memory.reserve(ranges.size());
  for (const auto& [at, n] : ranges) {
    h.memory.push_back(pattern(n, static_cast<unsigned>(at)));
    std::copy(h.memory.back().begin(), h.memory.back().end(), h.expected.begin() + at);
    std::fill(h.on_disk.begin() + at, h.on_disk.begin() + at + n, std::byte{0});
    h.lent.push_back({at, h.memory.back()});
  }
  return h;
}

}  // namespace

TEST_CASE(
    "a finished piece holds the library's bytes with the lent ones in its holes, named by "
    "their checksum",
    "[work_folder]") {
  // The expected bytes are put together here by plain copies; the name must carry checksum64
  // of exactly those bytes (common practice, no source: a checksum of the whole file in its
  // name). Sizes cross the writer's 8 MiB buffer and end off any block boundary; ranges are
  // given out of order. Checked on the temporary folder's file system and, when present, on
  // /dev/shm (tmpfs, which refuses direct I/O: the buffered way).
  const std::size_t size = (std::size_t{9} << 20) + 4321;
  std::vector<fs::path> roots;
  test::TempFolder tmp;
  roots.push_back(tmp.path());
  const fs::path shm = fs::path("/dev/shm") / ("unfurl-piece-test-" + std::to_string(::getpid()));
  std::error_code ec;
  if (fs::is_directory("/dev/shm", ec) && fs::create_directories(shm, ec)) roots.push_back(shm);
  for (const fs::path& root : roots) {
    INFO(root.string());
    Holed h =
        holed(size, {{(std::size_t{8} << 20) - 100, 5000}, {17, 4096 * 3 + 1}, {size - 9, 9}});
    write_file(root / ".temp-a", h.on_disk);
    write_file(root / "rows-0003.0123456789abcdef.h5", {});  // an older piece of the step
    write_file(root / "rows-0004.0123456789abcdef.h5", {});  // another step's
    const fs::path done = io::detail::finish_piece({root, "rows-0003", root / ".temp-a", h.lent});
    const std::vector<std::byte> got = bytes_of(done);
    CHECK(got.size() == h.expected.size());
    CHECK(got == h.expected);
    CHECK(done.filename().string() == "rows-0003." + hex(io::checksum64(h.expected)) + ".h5");
    CHECK_FALSE(fs::exists(root / ".temp-a"));
    CHECK_FALSE(fs::exists(root / "rows-0003.0123456789abcdef.h5"));
    CHECK(fs::exists(root / "rows-0004.0123456789abcdef.h5"));
  }
  fs::remove_all(shm, ec);
}

TEST_CASE(
    "a write that fails in the background is reported unsaved, later pieces skipped, no "
    "temporary file left",
    "[work_folder]") {
  test::TempFolder tmp;
  const fs::path root = tmp.path();
  io::detail::PieceWriter writer;
  const std::vector<std::byte> small = pattern(100, 1);
  // Lent bytes past the end of the file: the job fails in the writer thread.
  write_file(root / ".temp-bad", small);
  const std::vector<std::byte> memory = pattern(50, 2);
  writer.submit({root, "graph", root / ".temp-bad", {{80, memory}}});
  write_file(root / ".temp-next", small);
  writer.submit({root, "landmarks", root / ".temp-next", {}});
  const auto outcomes = writer.drain();
  REQUIRE(outcomes.size() == 2);
  CHECK(outcomes[0].kind == io::detail::PieceOutcome::Kind::unsaved);
  CHECK(outcomes[0].step == "graph");
  CHECK_FALSE(outcomes[0].error.empty());
  CHECK(outcomes[1].kind == io::detail::PieceOutcome::Kind::skipped);
  CHECK(fs::is_empty(root));
  CHECK(writer.drain().empty());  // each outcome is returned once
}
