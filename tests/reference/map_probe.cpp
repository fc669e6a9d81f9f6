// Exposes the io/ file layer to tests/reference/map_file_check.py:
//   map_probe write-map OUT [--geodesic]     a map with the synthetic contents below
//   map_probe read-map IN [--geodesic]       the map as JSON on stdout (every field)
//   map_probe copy-map IN OUT                read a map in full (any version), write it
//   map_probe read-edges IN [--table D] [--nodes N]
//   map_probe read-distances IN [--missing V]
//   map_probe write-csv OUT.csv OUT.raw      random float32 coordinates as CSV, plus the
//                                            same values raw (uint64 rows, uint64 cols,
//                                            then rows*cols little-endian float32)
// Errors print their message on stderr and exit with the project's exit code.
#include <cmath>
#include <cstdio>
#include <cstring>
#include <fstream>
#include <iostream>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "apps/exit_codes.hpp"
#include "engine/error.hpp"
#include "engine/preprocess.hpp"
#include "engine/random.hpp"
#include "io/csv_writer.hpp"
#include "io/graph_input.hpp"
#include "io/map_file.hpp"

namespace {

using nlohmann::json;

// The synthetic map; map_file_check.py computes the same values on its own side, so every
// expression here uses only operations IEEE 754 rounds the same everywhere.
unfurl::io::MapContents synthetic_map(bool geodesic) {
  const std::size_t n = 37, m = 3, l = 5;
  unfurl::io::MapContents c;
  c.coords = unfurl::PointSet(n, m);
  for (std::size_t i = 0; i < n; ++i)
    for (std::size_t k = 0; k < m; ++k)
      c.coords.row(i)[k] = static_cast<float>(i) * 0.25f - static_cast<float>(k) * 1.5f +
                           static_cast<float>(i % 3) * 0.125f;
  for (std::size_t i = 0; i < n; ++i) c.rows.push_back(static_cast<std::int64_t>(10 * i + 3));
  for (std::size_t j = 0; j < l; ++j) {
    c.landmark_rows.push_back(c.rows[7 * j]);
    for (std::size_t k = 0; k < m; ++k)
      c.landmark_coords.push_back((j + 1) / 3.0 + static_cast<double>(k) / 7.0);
    c.spectrum.push_back(10.0 / static_cast<double>(j + 1));
  }
  if (geodesic) {
    unfurl::DistanceRows g;
    g.rows = l;
    g.cols = n;
    for (std::size_t j = 0; j < l; ++j) {
      g.sources.push_back(static_cast<unfurl::NodeId>(7 * j));
      for (std::size_t i = 0; i < n; ++i)
        g.values.push_back(std::abs(static_cast<float>(i) - static_cast<float>(7 * j)) * 0.5f);
    }
    c.landmark_geodesic = g;
  }
  c.extras.push_back({"/quality/trustworthiness",
                      {0.9, 0.8},
                      {2},
                      {{"k", {5, 10}}, {"method", "exact"}, {"sample_size", 37}}});
  c.extras.push_back({"/graph/mean_degree", {4.5}, {}, {{"k", 4}}});
  // The record's groups, with ids beyond float64's whole numbers (2^53 + 1): int64 keeps them.
  const std::int64_t huge = (std::int64_t{1} << 53) + 1;
  unfurl::io::MapGraphRecord graph;
  graph.degree = {{4, 6, 9}};
  graph.edge_length = {{0.5, 0.75, 1.0, 1.25, 2.0}};
  graph.component_sizes = {37, 2};
  graph.dropped_rows = {huge, 5};
  graph.bridges = {{3, huge, 2.5}};
  c.graph = graph;
  unfurl::io::MapScoreRecord s{.k = 6,
                               .trustworthiness = 0.875,
                               .continuity = 0.75,
                               .knn_preservation = 0.5,
                               .trustworthiness_95 = {0.8, 0.9},
                               .continuity_95 = {0.7, 0.8},
                               .knn_preservation_95 = {0.4, 0.6},
                               .method = "sampled",
                               .sample_size = 3,
                               .interval_method = "bootstrap",
                               .scored_rows = {1, 4, 36},
                               .trustworthiness_terms = {0.25, 0.5, 0.125},
                               .continuity_terms = {0.0, 0.375, 1.0}};
  c.quality.by_k.push_back(s);
  c.input.centres = std::vector<double>{1.5, 2.5, -0.5};
  c.input.dropped_nonfinite_rows = {huge};
  c.attributes = {{"seed", 42},
                  {"parameters", {{"k", 8}, {"pick", "maxmin"}, {"radius", 0.75}}},
                  {"input",
                   {{"path", "/data/buoys.h5"},
                    {"dataset", "/points"},
                    {"bytes", 1234},
                    {"modified", "2026-01-01T00:00:00Z"}}},
                  {"stage_times", {{"graph", 0.5}, {"geodesic", 1.25}}}};
  return c;
}

json map_json(const unfurl::io::MapContents& c) {
  json out;
  out["coords"] = {{"rows", c.coords.rows}, {"cols", c.coords.cols}, {"values", c.coords.values}};
  out["rows"] = c.rows;
  out["landmark_rows"] = c.landmark_rows;
  out["landmark_coords"] = c.landmark_coords;
  out["spectrum"] = c.spectrum;
  if (c.landmark_geodesic) {
    const auto& g = *c.landmark_geodesic;
    out["geodesic"] = {
        {"rows", g.rows}, {"cols", g.cols}, {"sources", g.sources}, {"values", g.values}};
  }
  if (c.graph) {
    const auto& g = *c.graph;
    json bridges = json::array();
    for (const auto& b : g.bridges) bridges.push_back({b.from_row, b.to_row, b.length});
    out["graph"] = {{"component_sizes", g.component_sizes},
                    {"dropped_rows", g.dropped_rows},
                    {"bridges", bridges}};
    if (g.degree) out["graph"]["degree"] = *g.degree;
    if (g.edge_length) out["graph"]["edge_length"] = *g.edge_length;
  }
  json by_k = json::array();
  for (const auto& s : c.quality.by_k)
    by_k.push_back({{"k", s.k},
                    {"trustworthiness", s.trustworthiness},
                    {"continuity", s.continuity},
                    {"knn_preservation", s.knn_preservation},
                    {"trustworthiness_95", s.trustworthiness_95},
                    {"continuity_95", s.continuity_95},
                    {"knn_preservation_95", s.knn_preservation_95},
                    {"method", s.method},
                    {"sample_size", s.sample_size},
                    {"interval_method", s.interval_method},
                    {"scored_rows", s.scored_rows},
                    {"trustworthiness_terms", s.trustworthiness_terms},
                    {"continuity_terms", s.continuity_terms}});
  out["quality"] = {{"by_k", by_k}};
  if (const auto& r = c.quality.residual)
    out["quality"]["residual_variance"] = {{"by_dims", r->by_dims},
                                           {"standard_error", r->standard_error},
                                           {"pairs", r->pairs},
                                           {"sampled", r->sampled},
                                           {"drawn", r->drawn}};
  if (const auto& d = c.quality.dimension)
    out["quality"]["intrinsic_dimension"] = {
        {"estimate", d->estimate},   {"k", d->k},           {"method", d->method},
        {"averaging", d->averaging}, {"points", d->points}, {"points_used", d->points_used}};
  if (const auto& a = c.quality.axis_share)
    out["quality"]["axis_share"] = {{"share", a->share},
                                    {"standard_error", a->standard_error},
                                    {"basis", a->basis},
                                    {"noise_axes", a->noise_axes}};
  if (const auto& p = c.preprocess)
    out["preprocess"] = {{"scale", unfurl::scale_name(p->scale)},
                         {"metric", unfurl::metric_name(p->metric)},
                         {"components", p->components},
                         {"variance_kept", p->variance_kept},
                         {"centre", p->centre},
                         {"spread", p->spread},
                         {"pca_mean", p->pca_mean},
                         {"axes", p->axes},
                         {"variances", p->variances}};
  out["input"] = {{"dropped_nonfinite_rows", c.input.dropped_nonfinite_rows}};
  if (c.input.centres) out["input"]["centres"] = *c.input.centres;
  out["spectrum_attributes"] = c.spectrum_attributes;
  out["extras"] = json::array();
  for (const auto& e : c.extras)
    out["extras"].push_back(
        {{"path", e.path}, {"dims", e.dims}, {"values", e.values}, {"attributes", e.attributes}});
  out["attributes"] = c.attributes;
  return out;
}

std::string option(int argc, char** argv, const char* name, const std::string& fallback) {
  for (int k = 0; k + 1 < argc; ++k)
    if (std::strcmp(argv[k], name) == 0) return argv[k + 1];
  return fallback;
}

bool flag(int argc, char** argv, const char* name) {
  for (int k = 0; k < argc; ++k)
    if (std::strcmp(argv[k], name) == 0) return true;
  return false;
}

// NaN (a missing distance) prints as JSON null.
json floats_json(const std::vector<float>& v) {
  json out = json::array();
  for (float x : v) out.push_back(std::isnan(x) ? json(nullptr) : json(x));
  return out;
}

int run(int argc, char** argv) {
  if (argc < 3) throw unfurl::OptionError("usage: map_probe COMMAND FILE [options]");
  const std::string command = argv[1];
  const std::string file = argv[2];
  if (command == "write-map") {
    unfurl::io::write_map(file, synthetic_map(flag(argc, argv, "--geodesic")));
  } else if (command == "read-map") {
    std::cout << map_json(unfurl::io::read_map(file, flag(argc, argv, "--geodesic"))).dump()
              << "\n";
  } else if (command == "copy-map") {
    if (argc < 4) throw unfurl::OptionError("usage: map_probe copy-map IN OUT");
    unfurl::io::write_map(argv[3], unfurl::io::read_map(file, true));
  } else if (command == "read-edges") {
    unfurl::io::EdgeListOptions o;
    o.table_dataset = option(argc, argv, "--table", "");
    o.nodes = std::stoull(option(argc, argv, "--nodes", "0"));
    const auto e = unfurl::io::read_edge_list(file, o);
    std::cout << json{{"nodes", e.nodes},
                      {"from", e.from},
                      {"to", e.to},
                      {"length", e.length},
                      {"dropped_self_loops", e.dropped_self_loops}}
                     .dump()
              << "\n";
  } else if (command == "read-distances") {
    unfurl::io::DistanceMatrixOptions o;
    const std::string missing = option(argc, argv, "--missing", "");
    if (!missing.empty()) o.missing_value = std::stod(missing);
    const auto d = unfurl::io::read_partial_distances(file, o);
    std::cout << json{{"n", d.n},
                      {"missing_pairs", d.missing_pairs},
                      {"values", floats_json(d.values)}}
                     .dump()
              << "\n";
  } else if (command == "write-csv") {
    if (argc < 4) throw unfurl::OptionError("usage: map_probe write-csv OUT.csv OUT.raw");
    unfurl::Random rng(2026);
    unfurl::PointSet coords(300, 4);
    for (auto& v : coords.values) {
      do {
        const auto bits = static_cast<std::uint32_t>(rng.uniform() * 4294967296.0);
        std::memcpy(&v, &bits, 4);
      } while (!std::isfinite(v));
    }
    std::vector<std::int64_t> rows;
    for (std::size_t i = 0; i < coords.rows; ++i) rows.push_back(static_cast<std::int64_t>(5 * i));
    unfurl::io::write_coordinates_csv(file, coords, rows);
    std::ofstream raw(argv[3], std::ios::binary);
    const std::uint64_t shape[2] = {coords.rows, coords.cols};
    raw.write(reinterpret_cast<const char*>(shape), sizeof shape);
    raw.write(reinterpret_cast<const char*>(coords.values.data()),
              static_cast<std::streamsize>(coords.values.size() * 4));
  } else {
    throw unfurl::OptionError("map_probe: unknown command " + command);
  }
  return 0;
}

}  // namespace

int main(int argc, char** argv) {
  try {
    return run(argc, argv);
  } catch (const unfurl::Error& e) {
    std::cerr << e.what() << "\n";
    return static_cast<int>(unfurl::app::exit_code_of(e));
  } catch (const std::exception& e) {
    std::cerr << "map_probe: " << e.what() << "\n";
    return 70;
  }
}
