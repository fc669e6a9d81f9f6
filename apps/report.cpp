#include "apps/report.hpp"

#include <fmt/core.h>

#include <algorithm>

#include "engine/error.hpp"

namespace unfurl::app {
namespace {

using nlohmann::json;

std::string join(const std::vector<std::size_t>& v, std::size_t most) {
  std::string out;
  for (std::size_t i = 0; i < v.size() && i < most; ++i)
    out += (i ? ", " : "") + std::to_string(v[i]);
  if (v.size() > most) out += fmt::format(", ... ({} in all)", v.size());
  return out;
}

// The largest computed eigenvalues (descending) and the smallest ones (most negative first).
std::vector<double> largest_of(const EmbedResult& r) {
  const std::size_t count = std::min(r.spectral.largest, r.spectrum.size());
  return {r.spectrum.begin(), r.spectrum.begin() + static_cast<std::ptrdiff_t>(count)};
}

std::vector<double> smallest_of(const EmbedResult& r) {
  const std::size_t from =
      r.spectral.spectrum_complete ? 0 : std::min(r.spectral.largest, r.spectrum.size());
  return {r.spectrum.rbegin(), r.spectrum.rend() - static_cast<std::ptrdiff_t>(from)};
}

std::vector<double> first(const std::vector<double>& v, std::size_t most) {
  return {v.begin(), v.begin() + static_cast<std::ptrdiff_t>(std::min(most, v.size()))};
}

}  // namespace

json spectrum_json(const EmbedResult& r) {
  const SpectralSummary& s = r.spectral;
  const SpectrumMass& m = r.spectrum_mass;
  json j = {{"which", s.spectrum_complete ? "all" : "largest"},
            {"count", largest_of(r).size()},
            {"order", s.order},
            {"trace", m.trace},
            {"noise_floor", r.spectral.noise_floor},
            {"noise_axes", r.spectral.noise_axes}};
  if (!s.spectrum_complete) j["smallest_computed"] = smallest_of(r);
  if (!m.computed) {
    // No masses and no ratio rather than zeros a reader could take for figures.
    j["mass_method"] = "not computed";
    return j;
  }
  j["mass_method"] = m.exact ? "exact" : "estimated";
  j["positive_mass"] = m.positive;
  j["negative_mass"] = m.negative;
  j["negative_ratio"] = m.ratio();
  j["negative_ratio_standard_error"] = m.ratio_error();
  if (!m.exact) {
    j["mass_standard_error"] = m.standard_error;
    j["mass_source"] =
        "trace(B) exact; trace(|B|) by stochastic Lanczos quadrature (Hutchinson 1989; Ubaru, "
        "Chen and Saad 2017) with the computed eigenpairs deflated; standard errors over the "
        "probes";
    j["probes"] = m.probes;
    j["quadrature_steps"] = m.steps;
  }
  return j;
}

AxisSpectrum axis_spectrum(const EmbedResult& r) {
  const SpectrumMass& m = r.spectrum_mass;
  return {largest_of(r), m.positive, m.exact, 0.5 * m.standard_error, r.spectral.noise_floor};
}

AxisSpectrum axis_spectrum(const std::vector<double>& spectrum, const json& attributes) {
  AxisSpectrum a;
  a.top = spectrum;
  a.positive_mass = attributes.value("positive_mass", 0.0);
  a.mass_exact = attributes.value("mass_method", std::string()) == "exact";
  a.mass_error = 0.5 * attributes.value("mass_standard_error", 0.0);
  a.noise_floor = attributes.value("noise_floor", 0.0);
  return a;
}

json graph_json(const GraphSummary& s) {
  return {{"nodes", s.nodes},
          {"edges", s.undirected_edges},
          {"degree", {{"min", s.degree_min}, {"median", s.degree_median}, {"max", s.degree_max}}},
          {"edge_length",
           {{"min", s.length_min},
            {"p05", s.length_p05},
            {"median", s.length_median},
            {"p95", s.length_p95},
            {"max", s.length_max}}},
          {"isolated_nodes", s.isolated_nodes},
          {"duplicate_groups", s.duplicate_groups},
          {"duplicate_rows", s.duplicate_rows},
          {"search", search_name(s.search_used)},
          {"seconds", s.seconds},
          {"warnings", s.warnings}};
}

json embed_json(const EmbedResult& r) {
  json j;
  if (r.graph) j["graph"] = graph_json(*r.graph);
  json bridges = json::array();
  for (const auto& b : r.bridges)
    bridges.push_back({{"from_row", b.from}, {"to_row", b.to}, {"length", b.length}});
  j["components"] = {{"count", r.components.components},
                     {"sizes", r.components.sizes},
                     {"dropped_rows", r.dropped.size()},
                     {"bridges", bridges}};
  j["landmarks"] = {{"count", r.landmarks.landmarks},
                    {"pick", r.landmarks.pick == Pick::maxmin ? "maxmin" : "random"},
                    {"coverage_radius", r.landmarks.coverage_radius},
                    {"threads", r.landmarks.threads}};
  json spectral = {
      {"solver", r.spectral.solver},
      {"converged", r.spectral.converged},
      {"operations", {{"eigenpairs", r.spectral.operations}, {"mass", r.spectral.operations_mass}}},
      {"computed",
       {{"whole_spectrum", r.spectral.spectrum_complete},
        {"eigenvalues", r.spectrum.size()},
        {"positive", r.spectral.positive},
        {"negative", r.spectral.negative}}},
      {"eigenvalues_largest", first(largest_of(r), 10)},
      {"eigenvalues_smallest", first(smallest_of(r), 10)}};
  spectral.update(spectrum_json(r));
  spectral.erase("smallest_computed");
  j["spectral"] = spectral;
  j["map"] = {{"rows", r.coords.rows}, {"dims", r.coords.cols}};
  j["seconds"] = {{"graph", r.seconds.graph},       {"components", r.seconds.components},
                  {"node_order", r.seconds.order},  {"geodesics", r.seconds.geodesics},
                  {"spectral", r.seconds.spectral}, {"residual", r.seconds.residual},
                  {"map_back", r.seconds.map_back}, {"total", r.seconds.total}};
  j["warnings"] = r.warnings;
  return j;
}

json assessment_json(const Assessment& a) {
  json scores = json::array();
  for (const auto& s : a.neighbourhoods.by_k)
    scores.push_back({{"k", s.k},
                      {"trustworthiness", s.trustworthiness},
                      {"trustworthiness_95", {s.t_low, s.t_high}},
                      {"continuity", s.continuity},
                      {"continuity_95", {s.c_low, s.c_high}},
                      {"knn_preservation", s.knn_preservation},
                      {"knn_preservation_95", {s.knn_low, s.knn_high}},
                      {"method", s.sampled ? "sampled" : "exact"},
                      {"interval_method", s.interval_method},
                      {"sample_size", s.sample_size}});
  json j = {{"neighbourhoods", scores},
            {"axis_share", a.axis_share},
            {"axis_share_standard_error", a.axis_share_error},
            {"axis_share_basis", a.axis_share_basis},
            {"seconds", a.seconds}};
  if (a.residual)
    j["residual_variance"] = {{"by_dims", a.residual->by_dims},
                              {"standard_error", a.residual->standard_error},
                              {"pairs", a.residual->pairs},
                              {"sampled", a.residual->sampled},
                              {"drawn", a.residual->drawn}};
  if (a.dimension)
    j["intrinsic_dimension"] = {
        {"estimate", a.dimension->estimate},   {"k", a.dimension->k},
        {"averaging", a.dimension->averaging}, {"method", "Levina-Bickel maximum likelihood"},
        {"points", a.dimension->points},       {"points_used", a.dimension->points_used}};
  j["warnings"] = a.warnings;
  return j;
}

io::MapQualityRecord quality_record(const Assessment& a) {
  io::MapQualityRecord q;
  for (const auto& s : a.neighbourhoods.by_k)
    q.by_k.push_back({.k = static_cast<std::int64_t>(s.k),
                      .trustworthiness = s.trustworthiness,
                      .continuity = s.continuity,
                      .knn_preservation = s.knn_preservation,
                      .trustworthiness_95 = {s.t_low, s.t_high},
                      .continuity_95 = {s.c_low, s.c_high},
                      .knn_preservation_95 = {s.knn_low, s.knn_high},
                      .method = s.sampled ? "sampled" : "exact",
                      .sample_size = static_cast<std::int64_t>(s.sample_size),
                      .interval_method = s.interval_method,
                      .scored_rows = {s.scored_points.begin(), s.scored_points.end()},
                      .trustworthiness_terms = s.t_terms,
                      .continuity_terms = s.c_terms});
  if (a.residual)
    q.residual = io::MapResidualRecord{.by_dims = a.residual->by_dims,
                                       .standard_error = a.residual->standard_error,
                                       .pairs = static_cast<std::int64_t>(a.residual->pairs),
                                       .sampled = a.residual->sampled,
                                       .drawn = a.residual->drawn};
  if (a.dimension)
    q.dimension =
        io::MapDimensionRecord{.estimate = a.dimension->estimate,
                               .k = static_cast<std::int64_t>(a.dimension->k),
                               .method = "Levina-Bickel maximum likelihood",
                               .averaging = a.dimension->averaging,
                               .points = a.dimension->points,
                               .points_used = static_cast<std::int64_t>(a.dimension->points_used)};
  if (!a.axis_share.empty())
    q.axis_share = io::MapAxisShareRecord{.share = a.axis_share,
                                          .standard_error = a.axis_share_error,
                                          .basis = a.axis_share_basis,
                                          .noise_axes = {a.noise_axes.begin(), a.noise_axes.end()}};
  return q;
}

io::MapGraphRecord graph_record(const EmbedResult& r, std::span<const std::int64_t> input_rows) {
  io::MapGraphRecord g;
  if (r.graph) {
    const auto& s = *r.graph;
    g.degree = {static_cast<std::int64_t>(s.degree_min), static_cast<std::int64_t>(s.degree_median),
                static_cast<std::int64_t>(s.degree_max)};
    g.edge_length = {s.length_min, s.length_p05, s.length_median, s.length_p95, s.length_max};
  }
  g.component_sizes.assign(r.components.sizes.begin(), r.components.sizes.end());
  for (std::size_t p : r.dropped) g.dropped_rows.push_back(input_rows[p]);
  for (const auto& e : r.bridges)
    g.bridges.push_back({input_rows[e.from], input_rows[e.to], e.length});
  return g;
}

void print_graph(const GlobalOptions& g, const GraphSummary& s) {
  say(g,
      fmt::format("graph: {} nodes, {} edges ({} search, {:.2f} s); degree {}/{}/{} "
                  "(min/median/max); edge length {:.4g} .. {:.4g}, median {:.4g}",
                  s.nodes, s.undirected_edges, search_name(s.search_used), s.seconds, s.degree_min,
                  s.degree_median, s.degree_max, s.length_min, s.length_max, s.length_median));
  if (s.duplicate_rows > 0)
    say(g,
        fmt::format("graph: {} duplicate rows in {} groups", s.duplicate_rows, s.duplicate_groups));
}

void print_embedding(const GlobalOptions& g, const EmbedResult& r) {
  if (r.graph) print_graph(g, *r.graph);
  if (r.components.components > 1)
    say(g, fmt::format("components: {} (sizes {}); {} rows dropped, {} bridges added",
                       r.components.components, join(r.components.sizes, 5), r.dropped.size(),
                       r.bridges.size()));
  say(g, fmt::format("geodesics: {} sources x {} nodes in {:.2f} s", r.landmarks.landmarks,
                     r.landmarks.nodes, r.seconds.geodesics));
  const std::vector<double> largest = largest_of(r);
  std::string eig;
  for (std::size_t i = 0; i < largest.size() && i < 6; ++i)
    eig += (i ? ", " : "") + fmt::format("{:.4g}", largest[i]);
  const SpectrumMass& m = r.spectrum_mass;
  const std::string ratio =
      !m.computed ? std::string("not computed (--no-score)")
      : m.exact   ? fmt::format("{:.4f} (exact, whole spectrum)", m.ratio())
                  : fmt::format(
                        "{:.4f} +- {:.4f} (estimated over the whole spectrum by stochastic "
                          "Lanczos quadrature, {} probes; +- one standard error)",
                        m.ratio(), m.ratio_error(), m.probes);
  say(g, fmt::format("spectral: {} solver, largest eigenvalues {}{} ({} of {}); non-Euclidean "
                     "ratio {} ({:.2f} s)",
                     r.spectral.solver, eig, largest.size() > 6 ? ", ..." : "",
                     r.spectral.spectrum_complete ? std::string("all")
                                                  : std::to_string(largest.size()) + " computed",
                     r.spectral.order, ratio, r.seconds.spectral));
  if (r.residual)
    say(g, fmt::format("residual variance: {} pairs ({}) in {:.2f} s", r.residual->pairs,
                       r.residual->drawn, r.seconds.residual));
  say(g, fmt::format("map: {} rows x {} dims in {:.2f} s", r.coords.rows, r.coords.cols,
                     r.seconds.total));
  for (const auto& w : r.warnings) say(g, "warning: " + w);
}

void print_assessment(const GlobalOptions& g, const Assessment& a) {
  say(g, fmt::format("{:>6} {:>16} {:>16} {:>10}  {}", "k", "trustworthiness", "continuity",
                     "kNN kept", "method"));
  for (const auto& s : a.neighbourhoods.by_k) {
    const std::string method =
        s.sampled ? fmt::format(
                        "sampled, n = {}, 95% T [{:.4f}, {:.4f}] C [{:.4f}, {:.4f}] kNN "
                        "[{:.4f}, {:.4f}] ({})",
                        s.sample_size, s.t_low, s.t_high, s.c_low, s.c_high, s.knn_low, s.knn_high,
                        s.interval_method)
                  : "exact";
    say(g, fmt::format("{:>6} {:>16.4f} {:>16.4f} {:>10.4f}  {}", s.k, s.trustworthiness,
                       s.continuity, s.knn_preservation, method));
  }
  if (a.residual) {
    std::string curve;
    for (std::size_t d = 0; d < a.residual->by_dims.size(); ++d)
      curve += fmt::format("{}{}: {:.4f}", d ? ", " : "", d + 1, a.residual->by_dims[d]);
    if (!a.residual->standard_error.empty()) {
      curve += " (jackknife standard error";
      for (double e : a.residual->standard_error) curve += fmt::format(" {:.2g}", e);
      curve += ")";
    }
    say(g, fmt::format("residual variance by dims: {}; {} pairs: {}", curve, a.residual->pairs,
                       a.residual->drawn));
  }
  if (!a.axis_share.empty()) {
    std::string shares;
    for (std::size_t d = 0; d < a.axis_share.size(); ++d)
      shares += fmt::format("{}{}: {:.4f}", d ? ", " : "", d + 1, a.axis_share[d]);
    say(g,
        fmt::format("axis share of the positive eigenvalues ({}): {}", a.axis_share_basis, shares));
  }
  if (a.dimension)
    say(g, fmt::format("intrinsic dimension (Levina-Bickel, k = {}, {} {} points): {:.2f}",
                       a.dimension->k, a.dimension->points_used, a.dimension->points,
                       a.dimension->estimate));
  for (const auto& w : a.warnings) say(g, "warning: " + w);
}

void write_json_file(io::OutputSet& outputs, std::size_t output, const nlohmann::json& doc) {
  outputs.write_text(output, doc.dump(2) + "\n");
}

}  // namespace unfurl::app
