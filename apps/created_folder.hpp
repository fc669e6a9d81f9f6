// An output folder a command creates when it is missing (demo --out-dir, embed --plots-dir),
// removed again, with every parent the run created, when the run fails before anything was
// put in it.
#pragma once

#include <filesystem>
#include <string>
#include <vector>

namespace unfurl::app {

class CreatedFolder {
 public:
  // Creates `folder` and its missing parents; OutputError naming `option` when it cannot.
  CreatedFolder(const std::filesystem::path& folder, const std::string& option);
  ~CreatedFolder();  // removes the folders it made, when they are still empty
  CreatedFolder(const CreatedFolder&) = delete;
  CreatedFolder& operator=(const CreatedFolder&) = delete;
  void keep() { made_.clear(); }

 private:
  std::vector<std::filesystem::path> made_;  // deepest first
};

}  // namespace unfurl::app
