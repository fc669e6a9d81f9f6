// An output file that appears whole or not at all: write to a temporary file in the same
// folder, then commit() flushes it to disk and renames it over the final name. Destroyed
// without commit(), it removes the temporary file and leaves any earlier output untouched.
#pragma once

#include <filesystem>

namespace unfurl::io {

class AtomicOutput {
 public:
  // Throws OutputError when the folder of `final_path` does not exist or is not writable.
  explicit AtomicOutput(std::filesystem::path final_path);
  ~AtomicOutput();
  AtomicOutput(const AtomicOutput&) = delete;
  AtomicOutput& operator=(const AtomicOutput&) = delete;

  const std::filesystem::path& temp_path() const { return temp_; }
  const std::filesystem::path& final_path() const { return final_; }
  // fsync the temporary file and its folder, then rename it to the final path.
  // Throws IoError on failure (the temporary file is removed).
  void commit();

 private:
  std::filesystem::path final_;
  std::filesystem::path temp_;
  bool committed_ = false;
};

}  // namespace unfurl::io
