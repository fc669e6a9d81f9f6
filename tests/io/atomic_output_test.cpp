// The output set (io/atomic_output.hpp). Expectations follow POSIX stat(2)/rename(2)/link(2)
// semantics: one device and inode is one file, whatever the path spelling; a rename replaces
// the directory entry, so a symlink must be resolved to be written through. Common practice,
// no further source.
#include "io/atomic_output.hpp"

#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <atomic>
#include <catch2/catch.hpp>

#include "engine/error.hpp"
#include "io/detail/temp_names.hpp"
#include "tests/io/temp_folder.hpp"

namespace {

namespace fs = std::filesystem;
using unfurl::io::OutputSet;
using unfurl::test::file_bytes;
using unfurl::test::TempFolder;
using unfurl::test::write_bytes;

bool has_temporaries(const TempFolder& dir) {
  const auto names = dir.entries();
  return std::any_of(names.begin(), names.end(),
                     [](const std::string& n) { return n.find(".part-") != std::string::npos; });
}

unsigned mode_of(const fs::path& p) {
  struct stat st;
  REQUIRE(::stat(p.c_str(), &st) == 0);
  return st.st_mode & 07777;
}

}  // namespace

TEST_CASE("output set: nothing is renamed until commit, then everything is") {
  TempFolder dir;
  write_bytes(dir / "a.txt", "old a");
  write_bytes(dir / "b.txt", "old b");
  {
    OutputSet set;
    const auto a = set.add(dir / "a.txt", "-o");
    const auto b = set.add(dir / "b.txt", "--csv");
    set.write_text(a, "new a");
    set.write_text(b, "new b");
    CHECK(file_bytes(dir / "a.txt") == "old a");
    CHECK(file_bytes(dir / "b.txt") == "old b");
    CHECK(has_temporaries(dir));
    set.commit();
  }
  CHECK(file_bytes(dir / "a.txt") == "new a");
  CHECK(file_bytes(dir / "b.txt") == "new b");
  CHECK_FALSE(has_temporaries(dir));
}

TEST_CASE("output set: a failing write leaves every earlier file as it was") {
  TempFolder dir;
  write_bytes(dir / "a.txt", "old a");
  {
    OutputSet set;
    const auto a = set.add(dir / "a.txt", "-o");
    const auto b = set.add(dir / "b.txt", "--json");
    set.write_text(a, "new a");
    try {
      set.write(b, [](const fs::path& temp) {
        throw unfurl::IoError(temp.string() + ": write failed: No space left on device");
      });
      FAIL("no exception");
    } catch (const unfurl::IoError& e) {
      // The message names the output the user asked for, never the temporary file.
      const std::string m = e.what();
      CHECK(m.find("--json " + (dir / "b.txt").string()) == 0);
      CHECK(m.find(".part-") == std::string::npos);
      CHECK(m.find("No space left on device") != std::string::npos);
    }
  }  // destroyed without commit
  CHECK(file_bytes(dir / "a.txt") == "old a");
  CHECK_FALSE(fs::exists(dir / "b.txt"));
  CHECK_FALSE(has_temporaries(dir));
}

TEST_CASE("output set: a stop request before the renames changes nothing") {
  TempFolder dir;
  write_bytes(dir / "a.txt", "old a");
  std::atomic<bool> stop{false};
  {
    OutputSet set(unfurl::StopToken{&stop});
    const auto a = set.add(dir / "a.txt");
    const auto b = set.add(dir / "b.txt");
    set.write_text(a, "new a");
    set.write_text(b, "new b");
    stop = true;
    CHECK_THROWS_AS(set.commit(), unfurl::InterruptedError);
  }
  CHECK(file_bytes(dir / "a.txt") == "old a");
  CHECK_FALSE(fs::exists(dir / "b.txt"));
  CHECK_FALSE(has_temporaries(dir));
}

TEST_CASE("output set: the same file under two names is refused") {
  TempFolder dir;
  write_bytes(dir / "in.h5", "input");
  fs::create_symlink("in.h5", dir / "link.h5");
  fs::create_hard_link(dir / "in.h5", dir / "hard.h5");
  OutputSet set;
  set.add_input(dir / "in.h5", "input");
  CHECK_THROWS_AS(set.add(dir / "in.h5", "-o"), unfurl::OutputError);
  CHECK_THROWS_AS(set.add(dir / "link.h5", "-o"), unfurl::OutputError);
  CHECK_THROWS_AS(set.add(dir / "hard.h5", "-o"), unfurl::OutputError);
  CHECK_THROWS_AS(set.add(dir.path() / "." / "in.h5", "-o"), unfurl::OutputError);
  // Two spellings of one file that does not exist yet.
  set.add(dir / "new.h5", "-o");
  CHECK_THROWS_WITH(set.add(dir.path() / "." / "new.h5", "--csv"),
                    Catch::Contains("--csv") && Catch::Contains("-o"));
  CHECK(dir.entries().size() == 3);
}

TEST_CASE("output set: non-regular files, missing folders and empty names are refused") {
  TempFolder dir;
  REQUIRE(::mkfifo((dir / "fifo").c_str(), 0600) == 0);
  fs::create_directory(dir / "folder");
  OutputSet set;
  CHECK_THROWS_WITH(set.add(dir / "fifo", "-o"), Catch::Contains("FIFO"));
  CHECK_THROWS_WITH(set.add(dir / "folder", "-o"), Catch::Contains("folder"));
  CHECK_THROWS_WITH(set.add(dir / "missing" / "x", "-o"), Catch::Contains("does not exist"));
  CHECK_THROWS_AS(set.add("", "-o"), unfurl::OutputError);
  CHECK_THROWS_AS(set.add(dir.path() / "", "-o"), unfurl::OutputError);
}

TEST_CASE("output set: a symlink is written through and a replaced file keeps its mode") {
  TempFolder dir;
  fs::create_directory(dir / "real");
  write_bytes(dir / "real" / "target.txt", "old");
  ::chmod((dir / "real" / "target.txt").c_str(), 0640);
  fs::create_symlink("real/target.txt", dir / "link.txt");
  {
    OutputSet set;
    const auto i = set.add(dir / "link.txt");
    CHECK(set.target(i) == dir / "real/target.txt");
    set.write_text(i, "new");
    set.commit();
  }
  CHECK(fs::is_symlink(dir / "link.txt"));
  CHECK(file_bytes(dir / "real" / "target.txt") == "new");
  CHECK(mode_of(dir / "real" / "target.txt") == 0640);
}

TEST_CASE("output set: a new file gets 0666 less the umask") {
  TempFolder dir;
  const mode_t old = ::umask(022);
  {
    OutputSet set;
    const auto i = set.add(dir / "fresh.txt");
    set.write_text(i, "x");
    set.commit();
  }
  ::umask(old);
  CHECK(mode_of(dir / "fresh.txt") == 0644);
}

TEST_CASE("output set: the temporary name fits the file-name limit") {
  TempFolder dir;
  const long name_max = ::pathconf(dir.path().c_str(), _PC_NAME_MAX);
  REQUIRE(name_max > 10);
  // A name of exactly the limit, with multi-byte characters near the cut.
  std::string name(static_cast<std::size_t>(name_max) - 10, 'n');
  name += "\xc3\xa9\xc3\xa9\xc3\xa9.csv";  // three two-byte characters
  REQUIRE(name.size() == static_cast<std::size_t>(name_max));
  OutputSet set;
  const auto i = set.add(dir / name);
  set.write_text(i, "long");
  set.commit();
  CHECK(file_bytes(dir / name) == "long");
}

TEST_CASE("output set: stale temporary files of dead processes are removed") {
  TempFolder dir;
  const pid_t child = ::fork();
  if (child == 0) ::_exit(0);
  REQUIRE(child > 0);
  int status = 0;
  ::waitpid(child, &status, 0);  // now a pid that no longer exists
  const std::string dead = std::to_string(child);
  const std::string self = std::to_string(::getpid());
  write_bytes(dir / (".m.h5.part-" + dead + "-0"), "stale");
  write_bytes(dir / (".m.h5.part-" + self + "-0"), "live");
  write_bytes(dir / (".m.h5.part-0badc0de-" + dead + "-0"), "another host's");
  write_bytes(dir / ("m.h5.part-" + dead + "-0"), "not hidden: not ours");
  CHECK(unfurl::io::detail::remove_stale_temporaries(dir.path()) == 1);
  CHECK_FALSE(fs::exists(dir / (".m.h5.part-" + dead + "-0")));
  CHECK(dir.entries().size() == 3);
}

TEST_CASE("output set: a rename that fails puts back every file renamed before it") {
  TempFolder dir;
  write_bytes(dir / "a.txt", "old a");
  {
    OutputSet set;
    const auto a = set.add(dir / "a.txt", "-o");
    const auto b = set.add(dir / "b.txt", "--json");
    set.write_text(a, "new a");
    set.write_text(b, "new b");
    // Something else takes b's name after the checks: a folder, which no rename replaces.
    fs::create_directories(dir / "b.txt" / "inside");
    CHECK_THROWS_WITH(set.commit(), Catch::Contains("--json") && Catch::Contains("b.txt"));
  }
  CHECK(file_bytes(dir / "a.txt") == "old a");
  CHECK(fs::is_directory(dir / "b.txt"));
  CHECK_FALSE(has_temporaries(dir));
}
