#include "apps/report.hpp"

#include <fmt/core.h>

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

}  // namespace

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
  j["spectral"] = {
      {"solver", r.spectral.solver},
      {"converged", r.spectral.converged},
      {"order", r.spectral.order},
      {"positive_eigenvalues", r.spectral.positive},
      {"negative_eigenvalues", r.spectral.negative},
      {"negative_ratio", r.negative_ratio},
      {"eigenvalues_top",
       std::vector<double>(r.spectrum.begin(),
                           r.spectrum.begin() + std::min<std::size_t>(r.spectrum.size(), 10))}};
  j["map"] = {{"rows", r.coords.rows}, {"dims", r.coords.cols}};
  j["seconds"] = {{"graph", r.seconds.graph},       {"components", r.seconds.components},
                  {"node_order", r.seconds.order},  {"geodesics", r.seconds.geodesics},
                  {"spectral", r.seconds.spectral}, {"total", r.seconds.total}};
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
  json j = {{"neighbourhoods", scores}, {"axis_share", a.axis_share}, {"seconds", a.seconds}};
  if (a.residual)
    j["residual_variance"] = {{"by_dims", a.residual->by_dims},
                              {"pairs", a.residual->pairs},
                              {"sampled", a.residual->sampled}};
  if (a.dimension)
    j["intrinsic_dimension"] = {
        {"estimate", a.dimension->estimate},   {"k", a.dimension->k},
        {"averaging", a.dimension->averaging}, {"method", "Levina-Bickel maximum likelihood"},
        {"points", a.dimension->points},       {"points_used", a.dimension->points_used}};
  j["warnings"] = a.warnings;
  return j;
}

std::vector<io::MapArray> assessment_arrays(const Assessment& a) {
  std::vector<io::MapArray> out;
  for (const auto& s : a.neighbourhoods.by_k) {
    const std::string base = "/quality/k" + std::to_string(s.k) + "/";
    const json attrs = {{"k", s.k},
                        {"method", s.sampled ? "sampled" : "exact"},
                        {"sample_size", s.sample_size},
                        {"interval_method", s.interval_method}};
    auto scalar = [&](const std::string& name, double v, json extra = json::object()) {
      json at = attrs;
      at.update(extra);
      out.push_back({base + name, {v}, {}, at});
    };
    scalar("trustworthiness", s.trustworthiness, {{"interval_95", {s.t_low, s.t_high}}});
    scalar("continuity", s.continuity, {{"interval_95", {s.c_low, s.c_high}}});
    scalar("knn_preservation", s.knn_preservation, {{"interval_95", {s.knn_low, s.knn_high}}});
    std::vector<double> rows(s.scored_points.begin(), s.scored_points.end());
    out.push_back({base + "scored_rows",
                   rows,
                   {rows.size()},
                   {{"meaning", "map row of each per-point term"}}});
    out.push_back({base + "trustworthiness_terms",
                   s.t_terms,
                   {s.t_terms.size()},
                   {{"meaning", "each scored point's term of 1 - T(k)"}}});
    out.push_back({base + "continuity_terms",
                   s.c_terms,
                   {s.c_terms.size()},
                   {{"meaning", "each scored point's term of 1 - C(k)"}}});
  }
  if (a.residual)
    out.push_back({"/quality/residual_variance",
                   a.residual->by_dims,
                   {a.residual->by_dims.size()},
                   {{"pairs", a.residual->pairs},
                    {"sampled", a.residual->sampled},
                    {"meaning", "1 - R^2 of given vs map distances using the first d axes"}}});
  if (a.dimension)
    out.push_back({"/quality/intrinsic_dimension",
                   {a.dimension->estimate},
                   {},
                   {{"k", a.dimension->k},
                    {"method", "Levina-Bickel maximum likelihood"},
                    {"averaging", a.dimension->averaging},
                    {"points", a.dimension->points},
                    {"points_used", a.dimension->points_used}}});
  if (!a.axis_share.empty())
    out.push_back({"/quality/axis_share",
                   a.axis_share,
                   {a.axis_share.size()},
                   {{"meaning", "eigenvalue of each axis / sum of positive eigenvalues"}}});
  return out;
}

std::vector<io::MapArray> graph_arrays(const EmbedResult& r) {
  std::vector<io::MapArray> out;
  if (r.graph) {
    const auto& s = *r.graph;
    out.push_back({"/graph/degree",
                   {double(s.degree_min), double(s.degree_median), double(s.degree_max)},
                   {3},
                   {{"meaning", "min, median, max"}}});
    out.push_back({"/graph/edge_length",
                   {s.length_min, s.length_p05, s.length_median, s.length_p95, s.length_max},
                   {5},
                   {{"meaning", "min, 5%, median, 95%, max"}}});
  }
  std::vector<double> sizes(r.components.sizes.begin(), r.components.sizes.end());
  out.push_back({"/graph/component_sizes", sizes, {sizes.size()}, {{"meaning", "largest first"}}});
  std::vector<double> dropped(r.dropped.begin(), r.dropped.end());
  out.push_back({"/graph/dropped_rows",
                 dropped,
                 {dropped.size()},
                 {{"meaning", "input rows outside the embedded component"}}});
  if (!r.bridges.empty()) {
    std::vector<double> b;
    for (const auto& e : r.bridges) b.insert(b.end(), {double(e.from), double(e.to), e.length});
    out.push_back({"/graph/bridges",
                   b,
                   {r.bridges.size(), 3},
                   {{"meaning", "from row, to row, length of each edge added to connect"}}});
  }
  return out;
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
  std::string eig;
  for (std::size_t i = 0; i < r.spectrum.size() && i < 6; ++i)
    eig += (i ? ", " : "") + fmt::format("{:.4g}", r.spectrum[i]);
  say(g, fmt::format("spectral: {} solver, eigenvalues {}{}; non-Euclidean ratio {:.4f} "
                     "({:.2f} s)",
                     r.spectral.solver, eig, r.spectrum.size() > 6 ? ", ..." : "", r.negative_ratio,
                     r.seconds.spectral));
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
    say(g, fmt::format("residual variance by dims ({}{} pairs): {}",
                       a.residual->sampled ? "sampled, " : "", a.residual->pairs, curve));
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
