#include "apps/work_run.hpp"

#include <unistd.h>

#include <cstdio>

#include <fmt/core.h>

#include "engine/short_circuit.hpp"

namespace unfurl::app {
namespace {

namespace fs = std::filesystem;
using json = nlohmann::json;

std::vector<std::string>& command_words() {
  static std::vector<std::string> words;
  return words;
}

std::string& start_folder() {
  static std::string folder;
  return folder;
}

// A word as a POSIX shell reads it back unchanged: bare when it holds only safe characters,
// else in single quotes (a quote inside becomes '\'').
std::string shell_word(const std::string& w) {
  const bool plain = !w.empty() && w.find_first_not_of(
                                       "abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ"
                                       "0123456789_-+=./:,@%") == std::string::npos;
  if (plain) return w;
  std::string out = "'";
  for (char c : w) out += c == '\'' ? std::string("'\\''") : std::string(1, c);
  return out + "'";
}

std::string landmark_text(const LandmarkChoice& c) {
  if (const auto* n = std::get_if<LandmarkCount>(&c)) return std::to_string(n->count);
  return std::holds_alternative<AllLandmarks>(c) ? "all" : "auto";
}

}  // namespace

void add_work_options(CLI::App* cmd, WorkArgs& w) {
  auto* dir = cmd->add_option("--work-dir", w.folder,
                              "Folder for the steps saved as they complete, so that a stopped "
                              "run resumes (default: the map's path + .work)");
  auto* off = cmd->add_flag("--no-work-dir", w.off,
                            "Save no steps and resume none (a stopped run starts over)");
  off->excludes(dir);
  cmd->add_flag("--keep-work-dir", w.keep,
                "Keep the work folder after a successful run (by default it is removed)")
      ->excludes(off);
  cmd->add_flag("--hash-whole-input", w.full_hash,
                "Recognise the input for resuming by a checksum of every byte (default: size, "
                "modification time and 64 sampled blocks)")
      ->excludes(off);
}

fs::path work_folder_path(const WorkArgs& w, const std::string& map) {
  return w.folder.empty() ? fs::path(map + ".work") : fs::path(w.folder);
}

io::WorkKeys work_keys(const GlobalOptions& g, const EmbedArgs& a, const json& identity,
                       const std::string& fingerprint) {
  // The input as read: the file (size, times, content) and how it was read.
  json input = {{"identity", identity},
                {"fingerprint", fingerprint},
                {"kind", a.input_kind},
                {"dataset", a.input.dataset},
                {"format", a.input.format},
                {"rows", a.input.rows},
                {"drop_nonfinite", a.input.drop_nonfinite},
                {"missing", a.missing}};
  json graph = {{"input", input},
                {"scale", a.scale},
                {"metric", a.metric},
                {"pre_pca", a.pre_pca},
                {"neighbourhood", neighbourhood_json(a.graph.neighbourhood)},
                {"neighbourhood_given", a.graph.neighbourhood_given},
                {"mutual", a.graph.mutual},
                {"search", a.graph.search},
                {"keep_duplicates", a.graph.keep_duplicates}};
  // Short circuits, components and node order: the command runs the engine's default
  // short-circuit check. Threads do not change results, so are not here.
  const ShortCircuitOptions suspects;
  json nodes = {{"graph", graph},
                {"short_circuits",
                 {{"length_factor", suspects.length_factor},
                  {"detour_factor", suspects.detour_factor},
                  {"max_settled", suspects.max_settled},
                  {"worst", suspects.worst}}},
                {"disconnected", a.graph.disconnected},
                {"node_order", a.map.node_order},
                {"step", "nodes"}};
  // Components and node order decide which nodes the landmarks are; dims sets the automatic
  // landmark count.
  json landmarks = {{"graph", graph},
                    {"disconnected", a.graph.disconnected},
                    {"node_order", a.map.node_order},
                    {"dims", a.map.dims},
                    {"landmarks", landmark_text(a.map.landmarks)},
                    {"pick", a.map.pick},
                    {"seed", g.seed}};
  // The map adds to what the landmarks fix (dims is there) whether the whole spectrum's masses
  // are estimated (a score); the residual variance its seed (ResidualOptions' other fields are
  // not options); the scores what assess_map reads.
  json map = {{"landmarks", landmarks}, {"step", "map"}, {"spectrum_mass", !a.no_score}};
  json residual = {{"map", map}, {"residual_seed", g.seed}};
  json scores = {
      {"residual", residual},     {"score_k", a.score.ks},    {"score_k_given", a.score.ks_given},
      {"method", a.score.method}, {"sample", a.score.sample}, {"linear", a.linear}};
  // The residual variance's source rows need neither landmarks nor map: the nodes the
  // components and node order leave, and the seed of the draw.
  json residual_rows = {{"graph", graph},
                        {"disconnected", a.graph.disconnected},
                        {"node_order", a.map.node_order},
                        {"residual_seed", g.seed},
                        {"step", "residual rows"}};
  return {graph.dump(),  landmarks.dump(),     map.dump(),  residual.dump(),
          scores.dump(), residual_rows.dump(), nodes.dump()};
}

WorkRun::WorkRun(const GlobalOptions& g, const WorkArgs& w, const EmbedArgs& a,
                 const json& identity)
    : g_(g),
      keep_(w.keep),
      folder_(
          work_folder_path(w, a.output),
          work_keys(g, a, identity, io::content_fingerprint(a.input.file, w.full_hash)),
          [this](io::PieceEvent e, const std::string& piece, const std::string& detail) {
            if (e == io::PieceEvent::loaded) {
              if (resumed_from_.empty())
                say(g_, fmt::format("resume: taking saved steps from {}", path().string()));
              resumed_from_.push_back(piece);
              say(g_, fmt::format("resume: {} taken from the work folder", piece));
            } else if (e == io::PieceEvent::damaged) {
              say(g_, fmt::format("warning: work folder: {}; recomputing {}", detail, piece));
            } else if (e == io::PieceEvent::stale) {
              say(g_, fmt::format("work folder: {} was {}; recomputing it", piece, detail));
            }
          },
          stop_token()) {}

void WorkRun::finish() {
  if (keep_) {
    say(g_, fmt::format("work folder kept: {}", path().string()));
    return;
  }
  folder_.remove();
}

void WorkRun::failed() {
  if (!folder_.existed()) folder_.remove();
}

void WorkRun::stopped() {
  folder_.flush();
  std::fflush(stdout);
  fmt::print(
      stderr, "unfurl: stopped; {} saved in {} ({} this run); resume with:\n  {}\n",
      folder_.pieces_saved() + resumed_from_.size() == 0 ? "no step is" : "the completed steps are",
      path().string(), folder_.pieces_saved(), rerun_command());
}

void remember_command_line(int argc, char** argv) {
  command_words().assign(argv, argv + argc);
  char here[4096];
  if (::getcwd(here, sizeof here)) start_folder() = here;
}

std::string rerun_command() {
  std::string out = start_folder().empty() ? "" : "cd " + shell_word(start_folder()) + " &&";
  for (const std::string& w : command_words()) out += (out.empty() ? "" : " ") + shell_word(w);
  return out;
}

}  // namespace unfurl::app
