// The work folder of `unfurl embed` (io/work_folder.hpp) seen from the command line: its
// options, the keys of the saved steps (every parameter each step depends on), the lines the
// run prints about it, and the command that resumes a stopped run.
#pragma once

#include <filesystem>
#include <string>
#include <vector>

#include <CLI/CLI.hpp>
#include <nlohmann/json.hpp>

#include "apps/embed_job.hpp"
#include "io/work_folder.hpp"

namespace unfurl::app {

struct WorkArgs {
  std::string folder;      // --work-dir; empty: beside the map, "MAP.work"
  bool off = false;        // --no-work-dir: save nothing, resume nothing
  bool keep = false;       // --keep-work-dir: keep the folder after a successful run
  bool full_hash = false;  // --hash-whole-input: the input's key hashes every byte
};
void add_work_options(CLI::App* cmd, WorkArgs& args);

// The folder a run uses: --work-dir, else the map's path with ".work" appended.
std::filesystem::path work_folder_path(const WorkArgs& work, const std::string& map);

// The keys of the saved steps for this run (exposed for the tests of what a key contains).
io::WorkKeys work_keys(const GlobalOptions& g, const EmbedArgs& a, const nlohmann::json& identity,
                       const std::string& fingerprint);

class WorkRun {
 public:
  // Opens (or creates) the folder. `identity`: the input's, as the map records it.
  WorkRun(const GlobalOptions& g, const WorkArgs& work, const EmbedArgs& a,
          const nlohmann::json& identity);
  StepStore& store() { return folder_; }
  const std::filesystem::path& path() const { return folder_.path(); }
  // After the outputs are committed: removes the folder unless --keep-work-dir.
  void finish();
  // After a failure other than a stop: removes the folder if this run created it (the same
  // command would fail the same way; an earlier run's pieces are kept).
  void failed();
  // On a stop request: waits for the pieces being written, then prints on stderr what is
  // saved and the exact command that resumes.
  void stopped();
  // The pieces this run took from the folder instead of computing them (the run record's
  // "resumed" field; empty for a run from scratch).
  const std::vector<std::string>& resumed_from() const { return resumed_from_; }

 private:
  const GlobalOptions& g_;
  bool keep_;
  std::vector<std::string> resumed_from_;
  io::WorkFolder folder_;
};

// Called first in main(): keeps the command line and the current folder for rerun_command.
void remember_command_line(int argc, char** argv);
// The command line this process was started with, quoted for a POSIX shell and preceded by
// `cd FOLDER &&` (the folder it was started in), so that pasting it anywhere reruns it.
std::string rerun_command();

}  // namespace unfurl::app
