#include "io/map_file.hpp"

#include <chrono>
#include <ctime>
#include <set>

#include "engine/error.hpp"
#include "io/atomic_output.hpp"
#include "io/detail/file_stamp.hpp"
#include "io/detail/h5_json.hpp"
#include "io/detail/map_array_io.hpp"
#include "io/detail/map_groups.hpp"
#include "io/hdf5_file.hpp"
#include "io/points_reader.hpp"

namespace unfurl::io {
namespace {

namespace fs = std::filesystem;
using nlohmann::json;

void check_sizes(const fs::path& path, const MapContents& c) {
  const auto fail = [&](const std::string& what) {
    throw InternalError(path.string() + ": map contents disagree: " + what);
  };
  const std::size_t n = c.coords.rows, m = c.coords.cols;
  if (c.coords.values.size() != n * m) fail("/coords holds a wrong number of values");
  if (c.rows.size() != n)
    fail("/rows has " + std::to_string(c.rows.size()) + " entries, N is " + std::to_string(n));
  const std::size_t l = c.landmark_rows.size();
  if (c.landmark_coords.size() != l * m) fail("/landmarks/coords is not L x m");
  if (c.landmark_geodesic) {
    const DistanceRows& g = *c.landmark_geodesic;
    if (g.rows != l || g.cols != n || g.values.size() != l * n || g.sources.size() != l)
      fail("/landmarks/geodesic is not L x N with L sources");
  }
  for (const MapScoreRecord& s : c.quality.by_k) {
    const std::string base = "/quality/k" + std::to_string(s.k);
    if (s.trustworthiness_terms.size() != s.scored_rows.size() ||
        s.continuity_terms.size() != s.scored_rows.size())
      fail(base + ": the per-point terms are not one per scored row");
    for (std::int64_t r : s.scored_rows)
      if (r < 0 || static_cast<std::size_t>(r) >= n) fail(base + "/scored_rows: not a map row");
  }
  if (c.preprocess) {
    const PreprocessModel& p = *c.preprocess;
    const std::size_t d = p.input_cols, q = p.components;
    if (p.centre.size() != d || p.spread.size() != d ||
        (q > 0 && (p.pca_mean.size() != d || p.axes.size() != q * d || p.variances.size() != q)))
      fail("/preprocess: the arrays disagree with input_cols and components");
  }
  if (c.placement && c.placement->triangulation) {
    const Triangulation& t = *c.placement->triangulation;
    if (t.dims != m || t.landmarks != l || t.p.size() != m * l || t.mean_squared.size() != l)
      fail("/placement: the triangulation is not m x L with L mean squared distances");
  }
  if (c.placement && c.placement->placed && c.placement->placed->nearest_ratio.size() != n)
    fail("/placement/nearest_ratio: not one per map row");
  if (!c.attributes.is_object()) fail("attributes are not an object");
}

}  // namespace

std::string utc_now_iso8601() {
  return detail::iso8601_utc(
      std::chrono::system_clock::to_time_t(std::chrono::system_clock::now()));
}

json input_identity(const fs::path& file, const std::string& dataset) {
  std::error_code ec;
  const auto bytes = fs::file_size(file, ec);
  if (ec) throw MissingInputError(file.string() + ": cannot read file size: " + ec.message());
  const auto modified = fs::last_write_time(file, ec);
  if (ec) throw MissingInputError(file.string() + ": cannot read modification time");
  const auto system = std::chrono::file_clock::to_sys(modified);
  return {{"path", fs::absolute(file).string()},
          {"dataset", dataset},
          {"bytes", static_cast<std::int64_t>(bytes)},
          {"modified", detail::iso8601_utc(std::chrono::system_clock::to_time_t(system))}};
}

void write_map(const fs::path& path, const MapContents& c, H5WriteOptions large) {
  OutputSet outputs;
  write_map(outputs, outputs.add(path), c, large);
  outputs.commit();
}

void write_map(OutputSet& outputs, std::size_t output, const MapContents& c, H5WriteOptions large) {
  const fs::path& path = outputs.path(output);
  check_sizes(path, c);
  outputs.write(output, [&](const fs::path& temp) {
    H5Writer out(temp);
    const std::size_t n = c.coords.rows, m = c.coords.cols, l = c.landmark_rows.size();
    out.write("/coords", c.coords.values, {n, m},
              detail::layout_for_bytes(c.coords.values.size() * 4, large));
    out.write("/rows", c.rows, {n});
    out.write("/landmarks/rows", c.landmark_rows, {l});
    out.write("/landmarks/coords", c.landmark_coords, {l, m});
    if (c.landmark_geodesic) {
      const DistanceRows& g = *c.landmark_geodesic;
      out.write("/landmarks/geodesic", std::span<const float>(g.values), {l, n},
                detail::layout_for_bytes(g.values.size() * 4, large));
      out.write("/landmarks/nodes", g.sources, {l});
    }
    out.write("/spectrum", c.spectrum, {c.spectrum.size()});
    if (!c.spectrum_attributes.empty())
      detail::write_json_attributes(out, "/spectrum", c.spectrum_attributes);
    if (c.graph) detail::write_graph_group(out, *c.graph);
    detail::write_quality_group(out, c.quality);
    if (c.preprocess) detail::write_preprocess_group(out, *c.preprocess);
    detail::write_input_group(out, c.input);
    if (c.placement) detail::write_placement_group(out, *c.placement);
    for (const MapArray& extra : c.extras) {
      if (extra.path.empty() || extra.path[0] != '/')
        throw InternalError(path.string() + ": extra dataset path '" + extra.path +
                            "' is not absolute");
      detail::write_map_array(out, extra, large);
    }
    detail::write_json_attributes(out, "/",
                                  detail::stamp_attributes(c.attributes, map_format_version));
    out.close();
  });
}

namespace {

const std::set<std::string> graph_datasets = {"/graph/offsets", "/graph/targets", "/graph/lengths",
                                              "/graph/rows"};

const std::set<std::string> layout_datasets = {
    "/coords",          "/rows",    "/landmarks/rows", "/landmarks/coords", "/landmarks/geodesic",
    "/landmarks/nodes", "/spectrum"};

void expect_length(const H5Reader& in, const std::string& dataset, std::size_t got,
                   std::size_t want, const char* what) {
  if (got != want)
    throw DataError(in.path().string() + ": " + dataset + ": has " + std::to_string(got) +
                    " entries, expected " + std::to_string(want) + " (" + what + ")");
}

}  // namespace

MapContents read_map(const fs::path& path, bool with_geodesic) {
  H5Reader in(path);
  const std::int64_t version = detail::check_format_version(in, map_format_version, "map file");
  // List every dataset first: a damaged file whose listing fails is refused here, before any
  // object is read that the isolated check (which walks that same listing) never reached.
  const std::vector<std::string> all = in.datasets_under("/");
  MapContents c;
  const auto coords = in.require_rank("/coords", 2);
  c.coords.rows = coords.dims[0];
  c.coords.cols = coords.dims[1];
  c.coords.values = in.read<float>("/coords");
  const std::size_t n = c.coords.rows, m = c.coords.cols;
  in.require_rank("/rows", 1);
  c.rows = in.read<std::int64_t>("/rows");
  expect_length(in, "/rows", c.rows.size(), n, "one per row of /coords");

  if (in.has("/landmarks/rows")) {
    in.require_rank("/landmarks/rows", 1);
    c.landmark_rows = in.read<std::int64_t>("/landmarks/rows");
  }
  const std::size_t l = c.landmark_rows.size();
  if (in.has("/landmarks/coords") || l > 0) {
    const auto lc = in.require_rank("/landmarks/coords", 2);
    if (lc.dims[0] != l || lc.dims[1] != m)
      throw DataError(path.string() + ": /landmarks/coords: is " + std::to_string(lc.dims[0]) +
                      " x " + std::to_string(lc.dims[1]) +
                      ", expected L x m = " + std::to_string(l) + " x " + std::to_string(m));
    c.landmark_coords = in.read<double>("/landmarks/coords");
  }
  if (with_geodesic && in.has("/landmarks/geodesic")) {
    const auto g = in.require_rank("/landmarks/geodesic", 2);
    if (g.dims[0] != l || g.dims[1] != n)
      throw DataError(path.string() + ": /landmarks/geodesic: is " + std::to_string(g.dims[0]) +
                      " x " + std::to_string(g.dims[1]) +
                      ", expected L x N = " + std::to_string(l) + " x " + std::to_string(n));
    DistanceRows rows;
    rows.rows = l;
    rows.cols = n;
    rows.values.resize(l * n);  // read in place: no second L x N copy
    in.read_into<float>("/landmarks/geodesic", std::span<float>(rows.values));
    in.require_rank("/landmarks/nodes", 1);
    rows.sources = in.read<NodeId>("/landmarks/nodes");
    expect_length(in, "/landmarks/nodes", rows.sources.size(), l, "one per landmark");
    for (NodeId s : rows.sources)
      if (s >= n)
        throw DataError(path.string() + ": /landmarks/nodes: node " + std::to_string(s) +
                        " is not a map row (N = " + std::to_string(n) + ")");
    c.landmark_geodesic = std::move(rows);
  }
  if (in.has("/spectrum")) {
    in.require_rank("/spectrum", 1);
    c.spectrum = in.read<double>("/spectrum");
    c.spectrum_attributes = detail::read_json_attributes(in, "/spectrum");
  }
  std::set<std::string> known = layout_datasets;
  c.graph = detail::read_graph_group(in, version, known);
  c.quality = detail::read_quality_group(in, version, n, known);
  c.preprocess = detail::read_preprocess_group(in, known);
  c.input = detail::read_input_group(in, version, known);
  c.placement = detail::read_placement_group(in, version, n, m, l, known);
  for (const std::string& name : all) {
    // A full graph saved into the map is read_graph's business, not an extra.
    if (known.count(name) || graph_datasets.count(name) || name.rfind("/graph/nodes/", 0) == 0)
      continue;
    c.extras.push_back(detail::read_map_array(in, name));
  }
  c.attributes = detail::read_json_attributes(in, "/");
  return c;
}

bool is_map_file(const fs::path& file) {
  if (detect_point_format(file) != "hdf5") return false;
  const H5Reader in(file);
  return in.has_dataset("/coords") && in.has_dataset("/rows") &&
         in.has_attribute("/", "format_version");
}

}  // namespace unfurl::io
