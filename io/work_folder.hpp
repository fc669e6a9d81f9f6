// The work folder of a resumable run: the steps an embedding saves as they complete
// (engine/step_store.hpp), one HDF5 file per piece:
//
//   graph.CHECKSUM.h5         the neighbour graph, numberings, graph summary (JSON attribute)
//   nodes.CHECKSUM.h5         the connected graph in node order, the numberings back to graph
//                             nodes and input rows; the graph, short-circuit and component
//                             summaries, suspects and bridges (JSON attribute)
//   landmarks.CHECKSUM.h5     the landmark choice: sources in pick order, summary
//   rows-BBBB.CHECKSUM.h5     batch BBBB of the landmark rows: values, sources, first row
//   map.CHECKSUM.h5           spectrum, coordinates (ordered nodes), landmark coordinates and
//                             sources, summaries
//   residual-rows-BBBB.CHECKSUM.h5  batch BBBB of the residual variance's source rows: values,
//                             sources (made before the landmark rows)
//   residual.CHECKSUM.h5      the residual variance curve (JSON text attribute)
//   scores.CHECKSUM.h5        the scores (JSON text attribute, per-point terms included)
//
// CHECKSUM is 16 hex digits of checksum64 over the whole file. A piece is written under a
// temporary name (io/detail/temp_names.hpp) and renamed into place only when complete, so a
// killed run leaves each piece whole or absent; the name's checksum is verified before HDF5
// opens the file, so a piece torn by a crash of the machine, truncated or altered is found,
// reported and recomputed, and the HDF5 library never reads a damaged file in this process.
// (The isolated metadata walk every input file gets, io/hdf5_file.hpp, is done for all the
// pieces at once in one child when the folder is opened, while the process is small; a
// piece this run wrote needs none.) Pieces are not flushed to disk one by one (that would
// cost the run seconds): the checksum is the guard.
//
// Saving runs beside the computation: a save writes the piece's HDF5 structure and small
// arrays at once, and a writer thread of the folder's own (io/detail/piece_writer.hpp) puts
// the large arrays in, names the piece by its checksum and renames it, pieces in the order
// saved. save_graph, save_nodes and the row saves lend their arrays instead of copying them (the
// caller keeps them unchanged until flush(), as StepStore says); the other saves copy what they
// need. A failed write is reported as a notice (PieceEvent::unsaved) at the next call and ends the
// saving for the run; the run goes on.
//
// Every piece carries its step's key (text naming the input's identity and every parameter
// the step depends on, made by apps/); a piece with another key belongs to other parameters
// and is recomputed, and saving a piece removes the step's pieces of other keys.
#pragma once

#include <cstddef>
#include <cstdint>
#include <filesystem>
#include <functional>
#include <memory>
#include <mutex>
#include <set>
#include <span>
#include <string>
#include <vector>

#include "engine/step_store.hpp"

namespace unfurl::io {

class H5Reader;  // io/hdf5_file.hpp
class H5Writer;
namespace detail {
struct LentBytes;  // io/detail/piece_writer.hpp
struct PieceOutcome;
class PieceWriter;
}  // namespace detail

// Text keys of the saved steps. The landmark rows share the landmarks' key (the rows follow
// from the choice and the graph); a key should contain the keys of the steps before it.
struct WorkKeys {
  std::string graph;
  std::string landmarks;
  std::string map;       // spectrum and coordinates
  std::string residual;  // the residual variance curve
  std::string scores;
  std::string residual_rows;  // its source rows: the graph, components, node order and seed
  std::string nodes;          // short circuits, components, node order: the graph and their options
};

// What became of a piece, for the messages apps/ prints: taken from the folder; saved; passed
// over because it belongs to other parameters; damaged (checksum or contents) and removed; or
// not saved (the write failed: no further piece is saved this run, the run goes on).
enum class PieceEvent { loaded, saved, stale, damaged, unsaved };
// Called on a thread that calls the folder (never its writer thread), with the folder's lock
// held: it must not call the folder back. `saved` and `unsaved` come when the writer has
// finished the piece: at a later call, or at flush().
using PieceNotice =
    std::function<void(PieceEvent event, const std::string& piece, const std::string& detail)>;

class WorkFolder final : public StepStore {
 public:
  // Opens the folder; it is created with the first piece saved. OutputError when the path is
  // something other than a folder; removes temporary files that ended processes left in it.
  WorkFolder(std::filesystem::path folder, WorkKeys keys, PieceNotice notice = {},
             StopToken stop = {});
  ~WorkFolder() override;  // waits for the writer (flush), reporting as flush does

  std::optional<NodeGraph> load_graph() override;
  void save_graph(const NodeGraph& graph) override;
  std::optional<NodesStep> load_nodes() override;
  void save_nodes(const NodesStep& nodes) override;
  std::optional<LandmarkResult> load_landmarks() override;
  void save_landmarks(const LandmarkResult& choice) override;
  bool load_rows(std::size_t batch, DistanceRows& rows, std::size_t first,
                 std::size_t count) override;
  void save_rows(std::size_t batch, const DistanceRows& rows, std::size_t first,
                 std::size_t count) override;
  std::optional<MapStep> load_map() override;
  void save_map(const MapStep& map) override;
  bool has_residual_rows(std::size_t batch) override;
  bool load_residual_rows(std::size_t batch, DistanceRows& rows) override;
  void save_residual_rows(std::size_t batch, const DistanceRows& rows) override;
  std::optional<ResidualVarianceCurve> load_residual() override;
  void save_residual(const ResidualVarianceCurve& curve) override;
  std::optional<Assessment> load_scores() override;
  void save_scores(const Assessment& scores) override;
  // Waits until every piece saved so far is on disk or reported unsaved.
  void flush() override;

  const std::filesystem::path& path() const { return folder_; }
  std::size_t pieces_loaded() const { return loaded_; }
  std::size_t pieces_saved() const { return saved_; }  // finished so far: flush() first
  bool existed() const { return existed_; }            // the folder was there before this run
  // Flushes, removes every piece and then the folder itself when nothing else is left in it.
  void remove();

 private:
  // Reads the piece of `step` saved with `key` through `read`, once its checksum is verified;
  // pieces of other keys are reported stale, torn ones or ones that fail to read damaged (and
  // removed). False when there is none.
  bool take(const std::string& step, const std::string& key,
            const std::function<void(const H5Reader&)>& read);
  // Writes a piece through `fill` with `key`, names it by its checksum, and removes the step's
  // other pieces; the writer thread finishes it. save_lending's `fill` may also reserve
  // datasets and lend their bytes (lend() in the .cpp) instead of writing them.
  void save(const std::string& step, const std::string& key,
            const std::function<void(H5Writer&)>& fill);
  void save_lending(const std::string& step, const std::string& key,
                    const std::function<void(H5Writer&, std::vector<detail::LentBytes>&)>& fill);
  // Counts and reports what the writer finished (lock held).
  void report(const std::vector<detail::PieceOutcome>& outcomes);
  // A piece holding one text (JSON) attribute, handed to `parse`, which throws when it is
  // bad. False when there is none.
  bool take_text(const std::string& step, const std::string& key,
                 const std::function<void(const std::string&)>& parse);
  void save_text(const std::string& step, const std::string& key, const std::string& text);
  void damaged(const std::string& step, const std::filesystem::path& file, const std::string& why);

  std::filesystem::path folder_;
  WorkKeys keys_;
  PieceNotice notice_;
  StopToken stop_;
  std::size_t loaded_ = 0, saved_ = 0;
  bool existed_ = false;
  bool unsaved_ = false;  // a save failed: save no more
  std::mutex mutex_;      // one thread at a time in HDF5 through this folder, and the counts
  std::unique_ptr<detail::PieceWriter> writer_;
  // Steps saved by this run: read back (the residual rows after the map) without counting
  // as loaded, since nothing is resumed.
  std::set<std::string> saved_now_;
  // Pieces whose metadata need no walk in a child before they are opened: walked when the
  // folder was opened, or written by this run.
  std::set<std::filesystem::path> walked_;
};

// A 64-bit checksum of our own (four lanes of multiply-rotate over 8-byte words, then a
// final mix): detects torn and altered files, not deliberate forgeries.
std::uint64_t checksum64(std::span<const std::byte> bytes);
// checksum64 of a file's bytes, read in blocks. IoError when it cannot be read.
std::uint64_t file_checksum(const std::filesystem::path& file);
// A file's content fingerprint for the keys: the checksum of 64 blocks of 64 KiB spread
// evenly over the file (and its size), or of every byte when `full`; 16 hex digits.
std::string content_fingerprint(const std::filesystem::path& file, bool full);

}  // namespace unfurl::io
