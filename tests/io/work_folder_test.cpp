#include "io/work_folder.hpp"

#include <algorithm>
#include <atomic>
#include <catch2/catch.hpp>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <iterator>
#include <span>
#include <vector>

#include "engine/embedding.hpp"
#include "engine/embedding_steps.hpp"
#include "engine/error.hpp"
#include "engine/synthetic.hpp"
#include "io/detail/hdf5_sandbox.hpp"
#include "io/hdf5_file.hpp"
#include "tests/io/temp_folder.hpp"

using namespace unfurl;
namespace fs = std::filesystem;

namespace {

struct Events {
  std::vector<std::pair<io::PieceEvent, std::string>> seen;
  io::PieceNotice notice() {
    return [this](io::PieceEvent e, const std::string& piece, const std::string&) {
      seen.emplace_back(e, piece);
    };
  }
  std::size_t count(io::PieceEvent e) const {
    std::size_t n = 0;
    for (const auto& s : seen) n += s.first == e;
    return n;
  }
};

fs::path only_piece(const fs::path& folder, const std::string& step) {
  for (const auto& e : fs::directory_iterator(folder))
    if (e.path().filename().string().rfind(step + ".", 0) == 0) return e.path();
  return {};
}

}  // namespace

TEST_CASE("work folder: pieces round-trip, stale keys and damaged files are recomputed",
          "[work_folder]") {
  test::TempFolder tmp;
  const fs::path dir = tmp.path() / "run.work";
  GraphOptions go;
  go.neighbourhood = NearestK{6};
  const NodeGraph graph = node_graph(swiss_roll(400, 3).points, go);
  LandmarkOptions lo;
  lo.count = LandmarkCount{7};
  LandmarkResult choice = choose_landmarks(graph.graph, lo);
  DistanceRows rows = choice.rows;
  rows.values.resize(rows.rows * rows.cols);
  fill_landmark_rows(graph.graph, rows, 0, rows.rows);
  {
    io::WorkFolder w(dir, {"graph-key", "landmarks-key", "map-key", "residual-key", "scores-key",
                           "residual-rows-key", "nodes-key"});
    CHECK_FALSE(w.load_graph());
    w.save_graph(graph);
    w.save_landmarks(choice);
    w.save_rows(0, rows, 0, 4);
    w.save_rows(1, rows, 4, 3);
    w.flush();  // the writer thread finishes pieces in the background
    CHECK(w.pieces_saved() == 4);
  }
  // Each name carries checksum64 of the file's bytes as they are on disk (common practice,
  // no source: a checksum of the whole file in its name).
  std::size_t named = 0;
  for (const auto& e : fs::directory_iterator(dir)) {
    const std::string name = e.path().filename().string();
    std::ifstream in(e.path(), std::ios::binary);
    std::vector<char> chars((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
    char sum[17];
    std::snprintf(sum, sizeof sum, "%016llx",
                  static_cast<unsigned long long>(io::checksum64(std::as_bytes(std::span(chars)))));
    CHECK(name.substr(name.size() - 19) == std::string(sum) + ".h5");
    ++named;
  }
  CHECK(named == 4);
  Events ev;
  io::WorkFolder w(dir,
                   {"graph-key", "landmarks-key", "map-key", "residual-key", "scores-key",
                    "residual-rows-key", "nodes-key"},
                   ev.notice());
  const auto g = w.load_graph();
  REQUIRE(g);
  CHECK(g->graph.offsets == graph.graph.offsets);
  CHECK(g->graph.targets == graph.graph.targets);
  CHECK(g->graph.lengths == graph.graph.lengths);
  CHECK(std::vector<NodeId>(g->node_of_point.values().begin(), g->node_of_point.values().end()) ==
        std::vector<NodeId>(graph.node_of_point.values().begin(),
                            graph.node_of_point.values().end()));
  CHECK(g->summary.length_median == graph.summary.length_median);  // float through JSON
  CHECK(g->summary.warnings == graph.summary.warnings);
  REQUIRE(g->dimension.has_value() == graph.dimension.has_value());
  if (g->dimension) CHECK(g->dimension->estimate == graph.dimension->estimate);
  const auto c = w.load_landmarks();
  REQUIRE(c);
  CHECK(c->rows.sources == choice.rows.sources);
  CHECK(c->summary.coverage_radius == choice.summary.coverage_radius);
  DistanceRows back = choice.rows;
  back.values.assign(rows.values.size(), -1.0f);
  CHECK(w.load_rows(0, back, 0, 4));
  CHECK(w.load_rows(1, back, 4, 3));
  CHECK(back.values == rows.values);
  CHECK(ev.count(io::PieceEvent::loaded) == 4);

  // Other parameters: the piece is passed over (and kept until a new one replaces it).
  Events other;
  io::WorkFolder changed(dir,
                         {"graph-key", "other-landmarks", "map-key", "residual-key", "scores-key",
                          "residual-rows-key", "nodes-key"},
                         other.notice());
  CHECK_FALSE(changed.load_landmarks());
  CHECK(other.count(io::PieceEvent::stale) == 1);
  changed.save_landmarks(choice);
  changed.flush();
  CHECK(fs::exists(only_piece(dir, "landmarks")));
  std::size_t landmark_pieces = 0;
  for (const auto& e : fs::directory_iterator(dir))
    landmark_pieces += e.path().filename().string().rfind("landmarks.", 0) == 0;
  CHECK(landmark_pieces == 1);

  // Truncated, then one byte altered: each found by its checksum (common practice, no
  // source: a checksum in the name verified before use), removed, reported, not loaded.
  const fs::path batch0 = only_piece(dir, "rows-0000");
  fs::resize_file(batch0, fs::file_size(batch0) / 2);
  const fs::path batch1 = only_piece(dir, "rows-0001");
  {
    std::fstream f(batch1, std::ios::in | std::ios::out | std::ios::binary);
    f.seekg(static_cast<std::streamoff>(fs::file_size(batch1) / 2));
    char b = 0;
    f.read(&b, 1);
    f.seekp(static_cast<std::streamoff>(fs::file_size(batch1) / 2));
    b = static_cast<char>(b ^ 0x10);
    f.write(&b, 1);
  }
  Events damaged;
  io::WorkFolder again(dir,
                       {"graph-key", "landmarks-key", "map-key", "residual-key", "scores-key",
                        "residual-rows-key", "nodes-key"},
                       damaged.notice());
  CHECK_FALSE(again.load_rows(0, back, 0, 4));
  CHECK_FALSE(again.load_rows(1, back, 4, 3));
  CHECK(damaged.count(io::PieceEvent::damaged) == 2);
  CHECK_FALSE(fs::exists(batch0));
  CHECK_FALSE(fs::exists(batch1));

  again.remove();
  CHECK_FALSE(fs::exists(dir));
}

TEST_CASE(
    "a stopped embedding leaves its work folder drained: every finished batch saved, no "
    "temporary file; the resumed run equals one without a folder",
    "[work_folder][resume]") {
  // The reference is the folder-less run (the engine's one-pass path, itself checked against
  // scikit-learn's Isomap in tests/reference); the Swiss roll is DESIGN.md's.
  class StopAfterRows final : public StepStore {  // the folder, stopping the run as a signal
   public:
    explicit StopAfterRows(io::WorkFolder& f) : f_(f) {}
    std::atomic<bool> stop{false};
    std::size_t rows_saved = 0;
    std::optional<NodeGraph> load_graph() override { return f_.load_graph(); }
    void save_graph(const NodeGraph& g) override { f_.save_graph(g); }
    std::optional<NodesStep> load_nodes() override { return f_.load_nodes(); }
    void save_nodes(const NodesStep& n) override { f_.save_nodes(n); }
    std::optional<LandmarkResult> load_landmarks() override { return f_.load_landmarks(); }
    void save_landmarks(const LandmarkResult& c) override { f_.save_landmarks(c); }
    bool load_rows(std::size_t b, DistanceRows& r, std::size_t first, std::size_t n) override {
      return f_.load_rows(b, r, first, n);
    }
    void save_rows(std::size_t b, const DistanceRows& r, std::size_t first,
                   std::size_t n) override {
      f_.save_rows(b, r, first, n);
      if (++rows_saved == 3) stop = true;
    }
    std::optional<MapStep> load_map() override { return f_.load_map(); }
    void save_map(const MapStep& m) override { f_.save_map(m); }
    std::optional<ResidualVarianceCurve> load_residual() override { return f_.load_residual(); }
    void save_residual(const ResidualVarianceCurve& c) override { f_.save_residual(c); }
    bool has_residual_rows(std::size_t b) override { return f_.has_residual_rows(b); }
    bool load_residual_rows(std::size_t b, DistanceRows& r) override {
      return f_.load_residual_rows(b, r);
    }
    void save_residual_rows(std::size_t b, const DistanceRows& r) override {
      f_.save_residual_rows(b, r);
    }
    std::optional<Assessment> load_scores() override { return f_.load_scores(); }
    void save_scores(const Assessment& a) override { f_.save_scores(a); }
    void flush() override { f_.flush(); }

   private:
    io::WorkFolder& f_;
  };
  test::TempFolder tmp;
  const fs::path dir = tmp.path() / "stop.work";
  const io::WorkKeys keys{"graph",  "landmarks",     "map",  "residual",
                          "scores", "residual-rows", "nodes"};
  const PointSet points = swiss_roll(3000, 4).points;
  EmbedOptions o;
  o.graph.neighbourhood = NearestK{8};
  o.landmarks.count = LandmarkCount{40};
  o.keep_geodesics = true;
  const EmbedResult plain = embed_points(points, o);
  {
    io::WorkFolder folder(dir, keys);
    StopAfterRows store(folder);
    CHECK_THROWS_AS(embed_points(points, o, StopToken{&store.stop}, &store), InterruptedError);
    // No flush here: the engine drained the writer before the exception left it.
    std::size_t batches = 0, temporaries = 0, landmarks = 0;
    for (const auto& e : fs::directory_iterator(dir)) {
      const std::string name = e.path().filename().string();
      batches += name.rfind("rows-", 0) == 0;
      landmarks += name.rfind("landmarks.", 0) == 0;
      temporaries += name.find(".part-") != std::string::npos;
    }
    CHECK(batches == store.rows_saved);
    CHECK(batches >= 3);
    CHECK(landmarks == 1);
    CHECK(temporaries == 0);
    CHECK(folder.pieces_saved() == 3 + batches);  // graph, nodes, landmarks, batches
  }
  Events ev;
  io::WorkFolder again(dir, keys, ev.notice());
  const EmbedResult resumed = embed_points(points, o, {}, &again);
  CHECK(ev.count(io::PieceEvent::loaded) >= 2 + 3);
  CHECK(resumed.coords.values == plain.coords.values);
  CHECK(resumed.geodesic.values == plain.geodesic.values);
  CHECK(resumed.landmark_rows == plain.landmark_rows);
}

TEST_CASE("checksum64 and the content fingerprint change with any byte", "[work_folder]") {
  // Common practice, no source: a one-byte change or a shorter file must change the sum.
  std::vector<std::byte> bytes(1000);
  for (std::size_t i = 0; i < bytes.size(); ++i) bytes[i] = static_cast<std::byte>(i * 7);
  const std::uint64_t sum = io::checksum64(bytes);
  for (std::size_t at : {0u, 31u, 32u, 500u, 999u}) {
    auto changed = bytes;
    changed[at] ^= std::byte{1};
    CHECK(io::checksum64(changed) != sum);
  }
  CHECK(io::checksum64(std::span(bytes).first(999)) != sum);
  test::TempFolder tmp;
  const fs::path file = tmp.path() / "data.bin";
  std::ofstream(file, std::ios::binary).write(reinterpret_cast<const char*>(bytes.data()), 1000);
  CHECK(io::file_checksum(file) == sum);
  const std::string sampled = io::content_fingerprint(file, false);
  CHECK(sampled.size() == 16);
  char hex[17];
  std::snprintf(hex, sizeof hex, "%016llx", static_cast<unsigned long long>(sum));
  CHECK(io::content_fingerprint(file, true) == hex);
}

TEST_CASE("work folder: residual rows round-trip in place, damaged or stale ones are refused",
          "[work_folder]") {
  // Common practice, no source: a checksum in the name verified before use; the rows are
  // Dijkstra rows of a small Swiss roll graph, compared bit for bit with what was saved.
  test::TempFolder tmp;
  const fs::path dir = tmp.path() / "run.work";
  GraphOptions go;
  go.neighbourhood = NearestK{6};
  const NodeGraph graph = node_graph(swiss_roll(300, 5).points, go);
  LandmarkOptions lo;
  lo.count = LandmarkCount{5};
  DistanceRows rows = choose_landmarks(graph.graph, lo).rows;
  rows.values.resize(rows.rows * rows.cols);
  fill_landmark_rows(graph.graph, rows, 0, rows.rows);
  const io::WorkKeys keys{"g", "l", "m", "r", "s", "residual-rows", "n"};
  auto empty_like = [&] {
    DistanceRows back = rows;
    back.values.assign(rows.values.size(), -1.0f);
    return back;
  };
  {
    Events own;
    io::WorkFolder w(dir, keys, own.notice());
    CHECK_FALSE(w.has_residual_rows(0));
    w.save_residual_rows(0, rows);
    w.save_residual_rows(1, rows);
    // Read back by the run that saved it: taken, but not a resume (no loaded event).
    DistanceRows back = empty_like();
    CHECK(w.load_residual_rows(0, back));
    CHECK(back.values == rows.values);
    CHECK(own.count(io::PieceEvent::loaded) == 0);
    CHECK(w.pieces_loaded() == 0);
  }
  Events ev;
  io::WorkFolder w(dir, keys, ev.notice());
  CHECK(w.has_residual_rows(0));
  CHECK_FALSE(w.has_residual_rows(2));
  DistanceRows back = empty_like();
  CHECK(w.load_residual_rows(0, back));
  CHECK(back.values == rows.values);
  // Rows asked for with other sources: the piece is not theirs.
  DistanceRows shifted = empty_like();
  std::rotate(shifted.sources.begin(), shifted.sources.begin() + 1, shifted.sources.end());
  CHECK_FALSE(w.load_residual_rows(1, shifted));
  CHECK(ev.count(io::PieceEvent::damaged) == 1);

  // One byte altered: found by the checksum before HDF5 reads it, removed, reported.
  const fs::path piece = only_piece(dir, "residual-rows-0000");
  {
    std::fstream f(piece, std::ios::in | std::ios::out | std::ios::binary);
    const auto at = static_cast<std::streamoff>(fs::file_size(piece) / 2);
    char b = 0;
    f.seekg(at);
    f.read(&b, 1);
    f.seekp(at);
    f.put(static_cast<char>(b ^ 0x20));
  }
  back = empty_like();
  CHECK_FALSE(w.load_residual_rows(0, back));
  CHECK(ev.count(io::PieceEvent::damaged) == 2);
  CHECK_FALSE(fs::exists(piece));
  CHECK_FALSE(w.has_residual_rows(0));

  // Other parameters (a new seed): kept but passed over.
  w.save_residual_rows(0, rows);
  w.flush();  // the writer thread finishes pieces in the background
  Events other;
  io::WorkFolder changed(dir, {"g", "l", "m", "r", "s", "other seed", "n"}, other.notice());
  CHECK(changed.has_residual_rows(0));
  back = empty_like();
  CHECK_FALSE(changed.load_residual_rows(0, back));
  CHECK(other.count(io::PieceEvent::stale) == 1);
}

TEST_CASE("several files walked in one child: true when every walk finishes, false when not",
          "[work_folder]") {
  // Common practice, no source: the isolated walk of a sound file and of a file HDF5 merely
  // refuses ends normally; a walk cut off by its time limit is reported, for many files as
  // for one.
  test::TempFolder tmp;
  std::vector<fs::path> files;
  for (int i = 0; i < 3; ++i) {
    files.push_back(tmp.path() / ("piece-" + std::to_string(i) + ".h5"));
    io::H5Writer out(files.back());
    out.write("/values", std::vector<float>(100, static_cast<float>(i)), {10, 10});
    out.set_string_attribute("/", "key", "k");
    out.close();
  }
  files.push_back(tmp.path() / "not-hdf5.h5");
  std::ofstream(files.back()) << "plain text";
  CHECK(io::detail::check_hdf5_files_in_child(files));
  CHECK(io::detail::check_hdf5_files_in_child({}));
  // Opened without a second walk, the walked files read as written.
  const io::H5Reader in(files[1], {}, io::H5Walk::done);
  CHECK(in.read<float>("/values") == std::vector<float>(100, 1.0f));

  io::detail::set_hdf5_check_timeout(1e-9);  // no walk finishes in time
  CHECK_FALSE(io::detail::check_hdf5_files_in_child(files));
  CHECK_THROWS_AS(io::detail::check_hdf5_in_child(files[0]), IoError);
  io::detail::set_hdf5_check_timeout(10.0);
  CHECK(io::detail::check_hdf5_files_in_child(files));
}

TEST_CASE("work folder: the nodes piece round-trips bit for bit, and a damaged one is refused",
          "[work_folder]") {
  // Two Swiss rolls far apart: two components, bridged, so that bridges, a component summary
  // with warnings and a renumbered graph all travel; a suspect without a detour (+infinity,
  // which JSON cannot hold) is added by hand. The oracle is what was saved (a round trip).
  test::TempFolder tmp;
  const fs::path dir = tmp.path() / "nodes.work";
  PointSet points = swiss_roll(300, 7).points;
  const PointSet far = swiss_roll(200, 8).points;
  for (std::size_t r = 0; r < far.rows; ++r) {
    std::vector<float> row(far.row(r), far.row(r) + far.cols);
    row[0] += 1000.0f;
    points.values.insert(points.values.end(), row.begin(), row.end());
  }
  points.rows += far.rows;
  GraphOptions go;
  go.neighbourhood = NearestK{6};
  NodeGraph graph = node_graph(points, go);
  ComponentOptions co;
  co.policy = ComponentPolicy::bridge;
  ComponentResult connected = make_connected(graph.graph, co, graph.node_points);
  REQUIRE(connected.bridges.size() == 1);
  NodesStep step;
  step.ordered = order_nodes(connected, graph.node_points, {NodeOrder::morton});
  step.short_circuits = find_short_circuits(graph.graph);
  ShortCircuitEdge lone;
  lone.from = 3, lone.to = 9, lone.length = 2.5f, lone.detour_bound = 7.25, lone.separates = true;
  step.short_circuits->worst.push_back(lone);
  step.components = connected.summary;
  step.bridges = connected.bridges;
  step.connected_of_node = connected.old_of_new;
  step.node_of_point = graph.node_of_point;
  step.point_of_node = graph.point_of_node;
  step.graph = graph.summary;
  step.dimension = graph.dimension;
  const io::WorkKeys keys{"g", "l", "m", "r", "s", "rr", "nodes-key"};
  {
    io::WorkFolder w(dir, keys);
    CHECK_FALSE(w.load_nodes());
    w.save_nodes(step);
    w.flush();
    CHECK(w.pieces_saved() == 1);
  }
  const auto values = [](const Numbering& n) {
    return std::vector<NodeId>(n.values().begin(), n.values().end());
  };
  Events ev;
  io::WorkFolder w(dir, keys, ev.notice());
  const std::optional<NodesStep> back = w.load_nodes();
  REQUIRE(back);
  CHECK(ev.count(io::PieceEvent::loaded) == 1);
  CHECK(back->ordered.graph.offsets == step.ordered.graph.offsets);
  CHECK(back->ordered.graph.targets == step.ordered.graph.targets);
  CHECK(back->ordered.graph.lengths == step.ordered.graph.lengths);
  CHECK(back->ordered.order == NodeOrder::morton);
  CHECK(values(back->ordered.numbering.new_of_old) == values(step.ordered.numbering.new_of_old));
  CHECK(values(back->ordered.numbering.old_of_new) == values(step.ordered.numbering.old_of_new));
  CHECK(values(back->connected_of_node) == values(step.connected_of_node));
  CHECK(values(back->node_of_point) == values(step.node_of_point));
  CHECK(values(back->point_of_node) == values(step.point_of_node));
  REQUIRE(back->graph);
  CHECK(back->graph->length_median == step.graph->length_median);
  REQUIRE(back->dimension.has_value() == step.dimension.has_value());
  CHECK(back->components.sizes == step.components.sizes);
  CHECK(back->components.warnings == step.components.warnings);
  REQUIRE(back->bridges.size() == 1);
  CHECK(back->bridges[0].from == step.bridges[0].from);
  CHECK(back->bridges[0].to == step.bridges[0].to);
  CHECK(back->bridges[0].length == step.bridges[0].length);
  REQUIRE(back->short_circuits);
  CHECK(back->short_circuits->summary.edges == step.short_circuits->summary.edges);
  CHECK(back->short_circuits->summary.seconds == step.short_circuits->summary.seconds);
  REQUIRE(back->short_circuits->worst.size() == step.short_circuits->worst.size());
  for (std::size_t i = 0; i < step.short_circuits->worst.size(); ++i) {
    const ShortCircuitEdge &a = back->short_circuits->worst[i], &b = step.short_circuits->worst[i];
    CHECK(a.from == b.from);
    CHECK(a.to == b.to);
    CHECK(a.length == b.length);
    CHECK(a.scale_from == b.scale_from);
    CHECK(a.detour == b.detour);  // +infinity for the one added by hand
    CHECK(a.detour_bound == b.detour_bound);
    CHECK(a.separates == b.separates);
  }
  CHECK(std::isinf(back->short_circuits->worst.back().detour));

  // One byte altered: found by its checksum, reported damaged, removed, not loaded.
  const fs::path piece = only_piece(dir, "nodes");
  REQUIRE_FALSE(piece.empty());
  {
    std::fstream f(piece, std::ios::in | std::ios::out | std::ios::binary);
    const auto at = static_cast<std::streamoff>(fs::file_size(piece) * 2 / 3);
    f.seekg(at);
    char b = 0;
    f.read(&b, 1);
    f.seekp(at);
    b = static_cast<char>(b ^ 0x04);
    f.write(&b, 1);
  }
  Events damaged;
  io::WorkFolder again(dir, keys, damaged.notice());
  CHECK_FALSE(again.load_nodes());
  CHECK(damaged.count(io::PieceEvent::damaged) == 1);
  CHECK_FALSE(fs::exists(piece));
}
