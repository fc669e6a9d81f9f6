// The outputs of one run, committed together: each file is written under a temporary name
// beside its target, flushed to disk, and only when every one is complete are they all
// renamed into place in one short final step. Until then every earlier file stays
// byte-identical; a set destroyed without commit() removes its temporary files.
//
// add() resolves and checks an output before any work is done (OutputError, exit 73):
//   - an output may not be the same file as an input or as another output; files are
//     compared by device and inode (a would-be file by its folder's and its name), so
//     symlinks, hard links and other spellings of one file are caught;
//   - an existing output must be a regular file (never a folder, FIFO, socket or device);
//   - its folder must exist and be writable.
// A symlink to a regular file is written through: the link's target is replaced, the link
// stays. A replaced file keeps its permission bits; a new one gets the usual 0666 & ~umask.
//
// Temporary names are ".NAME.part-HOST-PID-SEQ" (io/detail/temp_names.hpp); add() removes
// those that processes of this host which no longer exist left in the output's folder.
#pragma once

#include <cstddef>
#include <cstdint>
#include <filesystem>
#include <functional>
#include <string>
#include <string_view>
#include <vector>

#include "engine/stop.hpp"

namespace unfurl::io {

class OutputSet {
 public:
  // `stop` is checked between writes and just before the final renames.
  explicit OutputSet(StopToken stop = {});
  ~OutputSet();  // removes every temporary file that was not renamed into place
  OutputSet(const OutputSet&) = delete;
  OutputSet& operator=(const OutputSet&) = delete;

  // A file the run reads: no output may be it. `label` names it in messages ("input").
  // An input that does not exist (yet) is left to its reader to report.
  void add_input(const std::filesystem::path& path, const std::string& label);

  // Declares and checks an output now (OutputError on failure) and removes stale
  // temporary files from its folder. `label` is the option the user named it with ("-o",
  // "--csv"); messages start with "LABEL PATH:". Returns the output's index.
  std::size_t add(const std::filesystem::path& path, const std::string& label = "");

  // Creates output i's temporary file, lets `fill` write it (truncating is fine), then
  // flushes it to disk. A failure removes the temporary file and is rethrown with the
  // output's label and path in place of the temporary name.
  void write(std::size_t i, const std::function<void(const std::filesystem::path& temp)>& fill);
  // write() of bytes, with the system's cause ("No space left on device") on failure.
  void write_text(std::size_t i, std::string_view text);

  // Renames every written output into place. Stop signals are held back meanwhile and the
  // stop token is checked just before: either all are renamed or none is (InterruptedError
  // or IoError; a file already renamed is put back from a hard link of its old version).
  void commit();

  std::size_t size() const { return outputs_.size(); }
  const std::filesystem::path& path(std::size_t i) const { return outputs_.at(i).path; }
  // The file that will be replaced: `path` with symlinks followed.
  const std::filesystem::path& target(std::size_t i) const { return outputs_.at(i).target; }
  // The temporary file of a written output, until commit().
  const std::filesystem::path& temp_path(std::size_t i) const { return outputs_.at(i).temp; }
  // "LABEL PATH" (or "PATH" without a label), as messages name the output.
  std::string name(std::size_t i) const;

 private:
  struct FileId {
    std::uint64_t dev = 0, ino = 0;
    std::string name;  // empty for an existing file; else the would-be name in folder dev:ino
    bool operator==(const FileId&) const = default;
  };
  struct Output {
    std::filesystem::path path, target, temp, backup;
    std::string label;
    FileId id;
    bool exists = false;
    unsigned mode = 0;  // permission bits of the replaced file
    std::uint32_t uid = 0, gid = 0;
    bool written = false;
  };
  struct Input {
    std::filesystem::path path;
    std::string label;
    FileId id;
  };
  void create_temp(std::size_t i);
  void remove_temporaries() noexcept;

  StopToken stop_;
  std::vector<Input> inputs_;
  std::vector<Output> outputs_;
  std::vector<FileId> cleaned_folders_;
  bool committed_ = false;
};

}  // namespace unfurl::io
