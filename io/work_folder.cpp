#include "io/work_folder.hpp"

#include <algorithm>
#include <bit>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <fstream>
#include <limits>
#include <system_error>
#include <vector>

#include <nlohmann/json.hpp>

#include "engine/error.hpp"
#include "io/detail/checksum.hpp"
#include "io/detail/hdf5_sandbox.hpp"
#include "io/detail/piece_names.hpp"
#include "io/detail/piece_writer.hpp"
#include "io/detail/temp_names.hpp"
#include "io/hdf5_file.hpp"

namespace unfurl {

// Summaries travel as JSON attributes: every field, so that a resumed run's map records what
// the straight run's does (floats and doubles round-trip exactly through nlohmann's output).
NLOHMANN_DEFINE_TYPE_NON_INTRUSIVE(GraphSummary, nodes, directed_edges, undirected_edges,
                                   degree_min, degree_median, degree_max, length_min, length_p05,
                                   length_median, length_p95, length_max, isolated_nodes,
                                   duplicate_groups, duplicate_rows, search_used, seconds, warnings)
NLOHMANN_DEFINE_TYPE_NON_INTRUSIVE(ShortCircuitSummary, edges, long_edges, suspects, undecided,
                                   length_factor, detour_factor, seconds, warnings)
NLOHMANN_DEFINE_TYPE_NON_INTRUSIVE(ComponentSummary, components, sizes, dropped_nodes, bridges,
                                   seconds, warnings)
NLOHMANN_DEFINE_TYPE_NON_INTRUSIVE(BridgeEdge, from, to, length)
NLOHMANN_DEFINE_TYPE_NON_INTRUSIVE(IntrinsicDimension, estimate, k, averaging, points, points_used,
                                   points_skipped, warnings)
NLOHMANN_DEFINE_TYPE_NON_INTRUSIVE(LandmarkSummary, landmarks, nodes, pick, coverage_radius,
                                   choice_visits, seconds, threads, warnings)
NLOHMANN_DEFINE_TYPE_NON_INTRUSIVE(SpectrumMass, computed, exact, positive, negative, trace,
                                   standard_error, probes, steps)
NLOHMANN_DEFINE_TYPE_NON_INTRUSIVE(SpectralSummary, solver, converged, spectrum_complete, largest,
                                   order, points, iterations, operations, positive, negative,
                                   operations_mass, noise_floor, noise_axes, seconds, threads,
                                   warnings)
NLOHMANN_DEFINE_TYPE_NON_INTRUSIVE(ResidualVarianceCurve, by_dims, standard_error, pairs, sampled,
                                   drawn, seconds, warnings)
NLOHMANN_DEFINE_TYPE_NON_INTRUSIVE(NeighbourhoodScore, k, trustworthiness, continuity,
                                   knn_preservation, t_low, t_high, c_low, c_high, knn_low,
                                   knn_high, interval_method, sampled, sample_size, scored_points,
                                   t_terms, c_terms, knn_terms)
NLOHMANN_DEFINE_TYPE_NON_INTRUSIVE(NeighbourhoodScores, by_k, points, queries, method, threads,
                                   seconds, warnings)

// A suspect by hand: JSON has no infinity, the detour of one whose search never reached the
// other end (null here).
void to_json(nlohmann::json& j, const ShortCircuitEdge& e) {
  j = {{"from", e.from},
       {"to", e.to},
       {"length", e.length},
       {"scale_from", e.scale_from},
       {"scale_to", e.scale_to},
       {"detour", std::isinf(e.detour) ? nlohmann::json() : nlohmann::json(e.detour)},
       {"detour_bound", e.detour_bound},
       {"separates", e.separates}};
}
void from_json(const nlohmann::json& j, ShortCircuitEdge& e) {
  j.at("from").get_to(e.from);
  j.at("to").get_to(e.to);
  j.at("length").get_to(e.length);
  j.at("scale_from").get_to(e.scale_from);
  j.at("scale_to").get_to(e.scale_to);
  e.detour = j.at("detour").is_null() ? std::numeric_limits<double>::infinity()
                                      : j.at("detour").get<double>();
  j.at("detour_bound").get_to(e.detour_bound);
  j.at("separates").get_to(e.separates);
}

// Assessment by hand: its optional members.
void to_json(nlohmann::json& j, const Assessment& a) {
  j = {{"neighbourhoods", a.neighbourhoods},
       {"axis_share", a.axis_share},
       {"axis_share_error", a.axis_share_error},
       {"axis_share_basis", a.axis_share_basis},
       {"noise_axes", a.noise_axes},
       {"seconds", a.seconds},
       {"warnings", a.warnings}};
  if (a.residual) j["residual"] = *a.residual;
  if (a.dimension) j["dimension"] = *a.dimension;
}
void from_json(const nlohmann::json& j, Assessment& a) {
  j.at("neighbourhoods").get_to(a.neighbourhoods);
  j.at("axis_share").get_to(a.axis_share);
  j.at("axis_share_error").get_to(a.axis_share_error);
  j.at("axis_share_basis").get_to(a.axis_share_basis);
  j.at("noise_axes").get_to(a.noise_axes);
  j.at("seconds").get_to(a.seconds);
  j.at("warnings").get_to(a.warnings);
  if (j.contains("residual")) a.residual = j["residual"].get<ResidualVarianceCurve>();
  if (j.contains("dimension")) a.dimension = j["dimension"].get<IntrinsicDimension>();
}

}  // namespace unfurl

namespace unfurl::io {
namespace {

namespace fs = std::filesystem;
using json = nlohmann::json;

using detail::hex16;

bool split_name(const std::string& name, std::string& step, std::string& sum) {
  return detail::split_piece_name(name, step, sum);
}

std::string rows_step(std::size_t batch, const char* kind = "rows") {
  char text[48];
  std::snprintf(text, sizeof text, "%s-%04zu", kind, batch);
  return text;
}

// The pieces in `folder` of `step` (of every step when it is empty), sorted by name.
std::vector<fs::path> pieces_of(const fs::path& folder, const std::string& step) {
  std::error_code ec;
  std::vector<fs::path> found;
  for (const auto& entry : fs::directory_iterator(folder, ec)) {
    std::string s, sum;
    if (split_name(entry.path().filename().string(), s, sum) && (step.empty() || s == step))
      found.push_back(entry.path());
  }
  std::sort(found.begin(), found.end());
  return found;
}

std::string residual_rows_step(std::size_t batch) {
  return rows_step(batch, "residual-rows");
}

// Reads a piece's rows into place (no second copy): `rows` rows [first, first + count), whose
// sources must be the piece's.
void read_rows(const H5Reader& in, DistanceRows& rows, std::size_t first, std::size_t count) {
  const std::vector<std::uint32_t> sources = in.read<std::uint32_t>("/sources");
  if (sources.size() != count ||
      !std::equal(sources.begin(), sources.end(), rows.sources.begin() + first))
    throw DataError("rows start from other sources");
  const H5DatasetInfo values = in.require_rank("/values", 2);
  if (values.dims[0] != count || values.dims[1] != rows.cols)
    throw DataError("rows have another shape");
  in.read_into<float>("/values", std::span<float>(rows.row(first), count * rows.cols));
}

using Lending = std::vector<detail::LentBytes>;

// A dataset whose bytes the writer thread takes from `values` (which must stay unchanged until
// the folder is flushed) instead of HDF5 copying them now.
template <class T>
void lend(H5Writer& out, Lending& lent, const std::string& dataset, std::span<const T> values,
          const std::vector<std::size_t>& dims) {
  const std::uint64_t at = out.reserve<T>(dataset, dims);
  if (!values.empty()) lent.push_back({at, std::as_bytes(values)});
}

// A graph's CSR arrays, as the graph and nodes pieces hold them.
void lend_graph(H5Writer& out, Lending& lent, const NeighbourGraph& g) {
  lend(out, lent, "/offsets", std::span(g.offsets), {g.offsets.size()});
  lend(out, lent, "/targets", std::span(g.targets), {g.targets.size()});
  lend(out, lent, "/lengths", std::span(g.lengths), {g.lengths.size()});
}
NeighbourGraph read_graph(const H5Reader& in) {
  NeighbourGraph g;
  g.offsets = in.read<std::int64_t>("/offsets");
  g.targets = in.read<std::uint32_t>("/targets");
  g.lengths = in.read<float>("/lengths");
  if (g.nodes() == 0 || g.targets.size() != g.lengths.size() ||
      static_cast<std::size_t>(g.offsets.back()) != g.targets.size())
    throw DataError("graph arrays disagree in size");
  return g;
}

}  // namespace

std::uint64_t checksum64(std::span<const std::byte> bytes) {
  detail::Checksum c;
  c.update(bytes);
  return c.value();
}

std::uint64_t file_checksum(const fs::path& file) {
  std::ifstream in(file, std::ios::binary);
  if (!in) throw IoError(file.string() + ": cannot open to check it");
  std::vector<std::byte> block(std::size_t{1} << 20);  // a multiple of 32 bytes
  detail::Checksum c;
  while (in) {
    in.read(reinterpret_cast<char*>(block.data()), static_cast<std::streamsize>(block.size()));
    c.update(std::span(block).first(static_cast<std::size_t>(in.gcount())));
  }
  if (in.bad()) throw IoError(file.string() + ": read failed while checking it");
  return c.value();
}

std::string content_fingerprint(const fs::path& file, bool full) {
  if (full) return hex16(file_checksum(file));
  std::error_code ec;
  const std::uintmax_t bytes = fs::file_size(file, ec);
  if (ec) throw MissingInputError(file.string() + ": cannot read file size: " + ec.message());
  std::ifstream in(file, std::ios::binary);
  if (!in) throw MissingInputError(file.string() + ": cannot open");
  constexpr std::uintmax_t kBlocks = 64, kBlock = 64 << 10;
  std::vector<std::byte> block(kBlock);
  std::vector<std::byte> sums;
  for (std::uintmax_t b = 0; b < kBlocks; ++b) {
    const std::uintmax_t start = bytes <= kBlock ? 0 : (bytes - kBlock) * b / (kBlocks - 1);
    in.seekg(static_cast<std::streamoff>(start));
    in.read(reinterpret_cast<char*>(block.data()), static_cast<std::streamsize>(kBlock));
    const std::uint64_t s =
        checksum64(std::span(block).first(static_cast<std::size_t>(in.gcount())));
    in.clear();
    const auto* p = reinterpret_cast<const std::byte*>(&s);
    sums.insert(sums.end(), p, p + 8);
    if (bytes <= kBlock) break;
  }
  const std::uint64_t size = bytes;
  const auto* p = reinterpret_cast<const std::byte*>(&size);
  sums.insert(sums.end(), p, p + 8);
  return hex16(checksum64(sums));
}

WorkFolder::WorkFolder(fs::path folder, WorkKeys keys, PieceNotice notice, StopToken stop)
    : folder_(std::move(folder)),
      keys_(std::move(keys)),
      notice_(std::move(notice)),
      stop_(stop),
      writer_(std::make_unique<detail::PieceWriter>()) {
  std::error_code ec;
  existed_ = fs::exists(folder_, ec);
  if (existed_ && !fs::is_directory(folder_, ec))
    throw OutputError(folder_.string() + ": cannot use as work folder: not a folder");
  if (!existed_) return;
  detail::remove_stale_temporaries(folder_);
  // Every piece's metadata walked in one child now, while the process is small, rather than
  // in a child per piece later (detail::check_hdf5_files_in_child says why); take() opens a
  // walked piece only once its checksum shows it unchanged since.
  const std::vector<fs::path> pieces = pieces_of(folder_, "");
  if (detail::check_hdf5_files_in_child(pieces, stop_))
    walked_.insert(pieces.begin(), pieces.end());
}

void WorkFolder::damaged(const std::string& step, const fs::path& file, const std::string& why) {
  if (notice_) notice_(PieceEvent::damaged, step, file.filename().string() + ": " + why);
  std::error_code ec;
  fs::remove(file, ec);
}

WorkFolder::~WorkFolder() {
  try {
    flush();
  } catch (...) {  // a notice that threw: nothing left to tell it to
  }
}

void WorkFolder::report(const std::vector<detail::PieceOutcome>& outcomes) {
  for (const detail::PieceOutcome& o : outcomes) {
    if (o.kind == detail::PieceOutcome::Kind::saved) {
      ++saved_;
      walked_.insert(o.file);  // written by this process: read back without a walk
      if (notice_) notice_(PieceEvent::saved, o.step, "");
    } else if (o.kind == detail::PieceOutcome::Kind::unsaved) {
      // The folder is a convenience: a full disk or a lost folder costs the resume, not the run.
      unsaved_ = true;
      if (notice_) notice_(PieceEvent::unsaved, o.step, o.error);
    }
  }
}

void WorkFolder::flush() {
  const std::vector<detail::PieceOutcome> done = writer_->drain();
  const std::lock_guard<std::mutex> lock(mutex_);
  report(done);
}

void WorkFolder::save(const std::string& step, const std::string& key,
                      const std::function<void(H5Writer&)>& fill) {
  save_lending(step, key, [&](H5Writer& out, Lending&) { fill(out); });
}

void WorkFolder::save_lending(const std::string& step, const std::string& key,
                              const std::function<void(H5Writer&, Lending&)>& fill) {
  const std::lock_guard<std::mutex> lock(mutex_);
  report(writer_->finished());
  if (unsaved_) return;
  std::error_code made;
  fs::create_directories(folder_, made);  // created with the first piece, not before
  const fs::path temp = detail::temp_name_for(folder_ / (step + ".h5"));
  try {
    detail::PieceJob job{folder_, step, temp, {}};
    {
      H5Writer out(temp);
      fill(out, job.lent);
      out.set_string_attribute("/", "key", key);
      out.close();
    }
    writer_->submit(std::move(job));
    saved_now_.insert(step);
  } catch (const InterruptedError&) {
    std::error_code ec;
    fs::remove(temp, ec);
    throw;
  } catch (const std::exception& e) {
    std::error_code ec;
    fs::remove(temp, ec);
    unsaved_ = true;
    if (notice_) notice_(PieceEvent::unsaved, step, e.what());
  }
}

bool WorkFolder::take(const std::string& step, const std::string& key,
                      const std::function<void(const H5Reader&)>& read) {
  const std::lock_guard<std::mutex> lock(mutex_);
  report(writer_->drain());  // a piece this run queued is on disk before it is looked for
  for (const fs::path& file : pieces_of(folder_, step)) {
    std::string s, sum;
    split_name(file.filename().string(), s, sum);
    try {
      if (hex16(file_checksum(file)) != sum) {
        damaged(step, file, "checksum differs (torn or altered)");
        continue;
      }
      // One open per piece: the key first, then the contents from the same reader.
      const H5Reader in(file, stop_, walked_.count(file) ? H5Walk::done : H5Walk::in_child);
      if (in.string_attribute("/", "key") != key) {
        if (notice_) notice_(PieceEvent::stale, step, "saved for other parameters or input");
        continue;
      }
      read(in);
    } catch (const InterruptedError&) {
      throw;
    } catch (const std::exception& e) {  // json and numbering errors too
      damaged(step, file, e.what());
      continue;
    }
    if (saved_now_.count(step)) return true;  // this run's own piece: no resume
    ++loaded_;
    if (notice_) notice_(PieceEvent::loaded, step, "");
    return true;
  }
  return false;
}

std::optional<NodeGraph> WorkFolder::load_graph() {
  NodeGraph g;
  const bool taken = take("graph", keys_.graph, [&](const H5Reader& in) {
    g.graph = read_graph(in);
    const std::size_t nodes = g.graph.nodes();
    std::vector<std::uint32_t> of_point = in.read<std::uint32_t>("/node_of_point");
    std::vector<std::uint32_t> of_node = in.read<std::uint32_t>("/point_of_node");
    const std::size_t points = of_point.size();
    if (of_node.size() != nodes) throw DataError("numberings disagree with the graph");
    g.node_of_point = Numbering(std::move(of_point), nodes);
    g.point_of_node = Numbering(std::move(of_node), points);
    const json s = json::parse(in.string_attribute("/", "summary"));
    g.summary = s.at("graph").get<GraphSummary>();
    if (s.contains("dimension")) g.dimension = s["dimension"].get<IntrinsicDimension>();
  });
  if (!taken) return std::nullopt;
  return g;
}

void WorkFolder::save_graph(const NodeGraph& g) {
  save_lending("graph", keys_.graph, [&](H5Writer& out, Lending& lent) {
    lend_graph(out, lent, g.graph);
    lend(out, lent, "/node_of_point", g.node_of_point.values(), {g.node_of_point.size()});
    lend(out, lent, "/point_of_node", g.point_of_node.values(), {g.point_of_node.size()});
    json s = {{"graph", g.summary}};
    if (g.dimension) s["dimension"] = *g.dimension;
    out.set_string_attribute("/", "summary", s.dump());
  });
}

std::optional<NodesStep> WorkFolder::load_nodes() {
  NodesStep n;
  const bool taken = take("nodes", keys_.nodes, [&](const H5Reader& in) {
    n.ordered.graph = read_graph(in);
    const std::size_t nodes = n.ordered.graph.nodes();
    std::vector<std::uint32_t> new_of_old = in.read<std::uint32_t>("/new_of_old");
    std::vector<std::uint32_t> connected = in.read<std::uint32_t>("/connected_of_node");
    std::vector<std::uint32_t> of_point = in.read<std::uint32_t>("/node_of_point");
    std::vector<std::uint32_t> of_node = in.read<std::uint32_t>("/point_of_node");
    const std::size_t graph_nodes = of_node.size(), points = of_point.size();
    if (new_of_old.size() != nodes || connected.size() != nodes)
      throw DataError("numberings disagree with the graph");
    n.ordered.numbering.new_of_old = Numbering(std::move(new_of_old), nodes);
    n.ordered.numbering.old_of_new = n.ordered.numbering.new_of_old.inverse();
    if (!n.ordered.numbering.old_of_new.missing().empty())
      throw DataError("the node order is not a permutation");
    n.connected_of_node = Numbering(std::move(connected), graph_nodes);
    n.node_of_point = Numbering(std::move(of_point), graph_nodes);
    n.point_of_node = Numbering(std::move(of_node), points);
    const json s = json::parse(in.string_attribute("/", "summary"));
    if (s.contains("graph")) n.graph = s["graph"].get<GraphSummary>();
    if (s.contains("dimension")) n.dimension = s["dimension"].get<IntrinsicDimension>();
    if (s.contains("short_circuits")) {
      n.short_circuits.emplace();
      s["short_circuits"].at("summary").get_to(n.short_circuits->summary);
      s["short_circuits"].at("worst").get_to(n.short_circuits->worst);
    }
    s.at("components").get_to(n.components);
    s.at("bridges").get_to(n.bridges);
    n.ordered.order = static_cast<NodeOrder>(s.at("order").get<int>());
  });
  if (!taken) return std::nullopt;
  return n;
}

void WorkFolder::save_nodes(const NodesStep& n) {
  save_lending("nodes", keys_.nodes, [&](H5Writer& out, Lending& lent) {
    lend_graph(out, lent, n.ordered.graph);
    const Numbering& order = n.ordered.numbering.new_of_old;
    lend(out, lent, "/new_of_old", order.values(), {order.size()});
    lend(out, lent, "/connected_of_node", n.connected_of_node.values(),
         {n.connected_of_node.size()});
    lend(out, lent, "/node_of_point", n.node_of_point.values(), {n.node_of_point.size()});
    lend(out, lent, "/point_of_node", n.point_of_node.values(), {n.point_of_node.size()});
    json s = {{"components", n.components},
              {"bridges", n.bridges},
              {"order", static_cast<int>(n.ordered.order)}};
    if (n.graph) s["graph"] = *n.graph;
    if (n.dimension) s["dimension"] = *n.dimension;
    if (n.short_circuits)
      s["short_circuits"] = {{"summary", n.short_circuits->summary},
                             {"worst", n.short_circuits->worst}};
    out.set_string_attribute("/", "summary", s.dump());
  });
}

std::optional<LandmarkResult> WorkFolder::load_landmarks() {
  LandmarkResult r;
  const bool taken = take("landmarks", keys_.landmarks, [&](const H5Reader& in) {
    r.rows.sources = in.read<std::uint32_t>("/sources");
    r.rows.rows = r.rows.sources.size();
    r.rows.cols = static_cast<std::size_t>(in.int_attribute("/", "nodes"));
    r.summary = json::parse(in.string_attribute("/", "summary")).get<LandmarkSummary>();
  });
  if (!taken) return std::nullopt;
  return r;
}

void WorkFolder::save_landmarks(const LandmarkResult& choice) {
  save("landmarks", keys_.landmarks, [&](H5Writer& out) {
    out.write("/sources", choice.rows.sources, {choice.rows.sources.size()});
    out.set_int_attribute("/", "nodes", static_cast<std::int64_t>(choice.rows.cols));
    out.set_string_attribute("/", "summary", json(choice.summary).dump());
  });
}

bool WorkFolder::load_rows(std::size_t batch, DistanceRows& rows, std::size_t first,
                           std::size_t count) {
  return take(rows_step(batch), keys_.landmarks, [&](const H5Reader& in) {
    if (in.int_attribute("/", "first") != static_cast<std::int64_t>(first))
      throw DataError("rows start from other landmarks");
    read_rows(in, rows, first, count);
  });
}

void WorkFolder::save_rows(std::size_t batch, const DistanceRows& rows, std::size_t first,
                           std::size_t count) {
  save_lending(rows_step(batch), keys_.landmarks, [&](H5Writer& out, Lending& lent) {
    lend(out, lent, "/values", std::span<const float>(rows.row(first), count * rows.cols),
         {count, rows.cols});
    out.write("/sources", std::span<const NodeId>(rows.sources.data() + first, count), {count});
    out.set_int_attribute("/", "first", static_cast<std::int64_t>(first));
  });
}

bool WorkFolder::has_residual_rows(std::size_t batch) {
  const std::lock_guard<std::mutex> lock(mutex_);
  report(writer_->drain());  // a piece this run queued is on disk before it is looked for
  return !pieces_of(folder_, residual_rows_step(batch)).empty();
}

bool WorkFolder::load_residual_rows(std::size_t batch, DistanceRows& rows) {
  return take(residual_rows_step(batch), keys_.residual_rows,
              [&](const H5Reader& in) { read_rows(in, rows, 0, rows.rows); });
}

void WorkFolder::save_residual_rows(std::size_t batch, const DistanceRows& rows) {
  save_lending(residual_rows_step(batch), keys_.residual_rows, [&](H5Writer& out, Lending& lent) {
    lend(out, lent, "/values", std::span<const float>(rows.values), {rows.rows, rows.cols});
    out.write("/sources", rows.sources, {rows.rows});
  });
}

std::optional<MapStep> WorkFolder::load_map() {
  MapStep m;
  const bool taken = take("map", keys_.map, [&](const H5Reader& in) {
    const json s = json::parse(in.string_attribute("/", "summary"));
    SpectralResult& r = m.spectral;
    r.summary = s.at("spectral").get<SpectralSummary>();
    r.mass = s.at("mass").get<SpectrumMass>();
    r.negative_ratio = s.at("negative_ratio").get<double>();
    m.landmarks = s.at("landmarks").get<LandmarkSummary>();
    const std::size_t rows = s.at("rows").get<std::size_t>(),
                      dims = s.at("dims").get<std::size_t>();
    r.coords = PointSet(rows, dims);
    r.coords.values = in.read<float>("/coords");
    r.landmark_coords = in.read<double>("/landmark_coords");
    r.spectrum = in.read<double>("/spectrum");
    m.sources = in.read<std::uint32_t>("/sources");
    if (r.coords.values.size() != rows * dims ||
        r.landmark_coords.size() != m.sources.size() * dims)
      throw DataError("map arrays disagree in size");
  });
  if (!taken) return std::nullopt;
  return m;
}

void WorkFolder::save_map(const MapStep& m) {
  const SpectralResult& r = m.spectral;
  save("map", keys_.map, [&](H5Writer& out) {
    out.write("/coords", r.coords.values, {r.coords.rows, r.coords.cols});
    out.write("/landmark_coords", r.landmark_coords, {r.landmark_coords.size()});
    out.write("/spectrum", r.spectrum, {r.spectrum.size()});
    out.write("/sources", m.sources, {m.sources.size()});
    const json s = {
        {"spectral", r.summary},    {"mass", r.mass},        {"negative_ratio", r.negative_ratio},
        {"landmarks", m.landmarks}, {"rows", r.coords.rows}, {"dims", r.coords.cols}};
    out.set_string_attribute("/", "summary", s.dump());
  });
}

bool WorkFolder::take_text(const std::string& step, const std::string& key,
                           const std::function<void(const std::string&)>& parse) {
  return take(step, key, [&](const H5Reader& in) { parse(in.string_attribute("/", "text")); });
}

void WorkFolder::save_text(const std::string& step, const std::string& key,
                           const std::string& text) {
  save(step, key, [&](H5Writer& out) { out.set_string_attribute("/", "text", text); });
}

std::optional<ResidualVarianceCurve> WorkFolder::load_residual() {
  ResidualVarianceCurve c;
  if (!take_text("residual", keys_.residual,
                 [&](const std::string& t) { c = json::parse(t).get<ResidualVarianceCurve>(); }))
    return std::nullopt;
  return c;
}

void WorkFolder::save_residual(const ResidualVarianceCurve& curve) {
  save_text("residual", keys_.residual, json(curve).dump());
}

std::optional<Assessment> WorkFolder::load_scores() {
  Assessment a;
  if (!take_text("scores", keys_.scores,
                 [&](const std::string& t) { a = json::parse(t).get<Assessment>(); }))
    return std::nullopt;
  return a;
}

void WorkFolder::save_scores(const Assessment& scores) {
  save_text("scores", keys_.scores, json(scores).dump());
}

void WorkFolder::remove() {
  flush();
  std::error_code ec;
  if (!fs::is_directory(folder_, ec)) return;
  for (const fs::path& p : pieces_of(folder_, "")) fs::remove(p, ec);
  detail::remove_stale_temporaries(folder_);
  if (fs::is_empty(folder_, ec)) fs::remove(folder_, ec);
}

}  // namespace unfurl::io
