#include "apps/embed_job.hpp"

#include <fmt/core.h>

#include "apps/preprocess_record.hpp"
#include "apps/report.hpp"
#include "apps/run_info.hpp"
#include "engine/error.hpp"
#include "engine/linear.hpp"
#include "io/atomic_output.hpp"
#include "io/csv_writer.hpp"
#include "io/map_file.hpp"

namespace unfurl::app {
namespace {

// The points of the map rows (the component policy may have removed some).
PointSet rows_of(const PointSet& points, const std::vector<std::size_t>& rows) {
  if (rows.size() == points.rows) return points;
  PointSet out(rows.size(), points.cols);
  for (std::size_t r = 0; r < rows.size(); ++r)
    std::copy_n(points.row(rows[r]), points.cols, out.row(r));
  return out;
}

void check_exact_memory(const EmbedArgs& a, const EmbedOptions& options, std::size_t n) {
  const std::uint64_t need = exact_mode_bytes(n, options.spectral);
  const std::uint64_t limit =
      a.max_memory.empty() ? default_memory_limit() : parse_bytes("--max-memory", a.max_memory);
  if (need > limit)
    throw ResourceError(fmt::format(
        "--landmarks all: exact mode on {} points needs about {} (N x N geodesics), over the "
        "limit of {}; use a landmark count or raise --max-memory",
        n, human_bytes(need), human_bytes(limit)));
}

PreprocessOptions to_preprocess_options(const EmbedArgs& a) {
  PreprocessOptions o;
  o.scale =
      from_name(a.scale, {Scale::none, Scale::standard, Scale::robust}, scale_name, Scale::none);
  o.metric =
      from_name(a.metric, {Metric::euclidean, Metric::cosine}, metric_name, Metric::euclidean);
  o.pca = a.pre_pca;
  return o;
}

nlohmann::json parameters_json(const GlobalOptions& g, const EmbedArgs& a, const EmbedOptions& o,
                               const EmbedResult& r) {
  return {{"input_kind", a.input_kind},
          {"k", o.graph.k},
          {"radius", o.graph.radius},
          {"mutual", o.graph.mutual},
          {"search", a.graph.search},
          {"keep_duplicates", o.graph.keep_duplicates},
          {"disconnected", a.graph.disconnected},
          {"scale", a.scale},
          {"metric", a.metric},
          {"pre_pca", a.pre_pca},
          {"linear", a.linear},
          {"dims", o.spectral.dims},
          {"landmarks", a.linear  ? std::string("none")
                        : o.exact ? std::string("all")
                                  : std::to_string(r.landmarks.landmarks)},
          {"pick", a.map.pick},
          {"node_order", a.map.node_order},
          {"drop_nonfinite", a.input.drop_nonfinite},
          {"rows", a.input.rows},
          {"score", !a.no_score},
          {"score_k", a.score.ks},
          {"threads", g.threads}};
}

// The PCA baseline, in the same result shape as an embedding.
EmbedResult linear_result(const PointSet& points, std::size_t dims) {
  LinearOptions lo;
  lo.dims = dims;
  LinearResult lin = linear_map(points, lo, stop_token());
  EmbedResult r;
  r.coords = std::move(lin.coords);
  r.rows.resize(points.rows);
  for (std::size_t i = 0; i < points.rows; ++i) r.rows[i] = i;
  r.spectrum = std::move(lin.spectrum);
  r.spectral.solver = "pca";
  r.spectral.spectrum_complete = true;
  r.spectral.largest = r.spectral.order = r.spectrum.size();
  r.spectrum_mass = whole_spectrum_mass(r.spectrum);
  r.seconds.spectral = r.seconds.total = lin.summary.seconds;
  return r;
}

}  // namespace

void add_embed_job_options(CLI::App* cmd, EmbedArgs& a) {
  add_graph_options(cmd, a.graph);
  cmd->add_option("--scale", a.scale,
                  "Scale each column first: z-score (standard) or median and interquartile "
                  "range (robust)")
      ->check(CLI::IsMember({"none", "standard", "robust"}))
      ->capture_default_str();
  cmd->add_option("--metric", a.metric,
                  "euclidean, or cosine (rows scaled to unit length; edges are then chord "
                  "lengths sqrt(2 - 2 cos))")
      ->check(CLI::IsMember({"euclidean", "cosine"}))
      ->capture_default_str();
  cmd->add_option("--pre-pca", a.pre_pca,
                  "Project on this many principal components before the neighbour search (0: "
                  "off)")
      ->capture_default_str();
  add_map_options(cmd, a.map);
  cmd->add_flag("--linear", a.linear, "Plain PCA instead (the linear baseline; no graph)");
  add_score_options(cmd, a.score);
  cmd->add_flag("--no-score", a.no_score, "Skip the quality scores");
  cmd->add_option("--csv", a.csv, "Also write the coordinates as CSV");
  cmd->add_option("--json", a.json, "Also write every figure of the run as JSON");
  cmd->add_option("--max-memory", a.max_memory,
                  "Refuse exact mode when it would need more (e.g. 8G; default: 80% of RAM)");
}

void check_outputs(const EmbedArgs& a) {
  // Constructing an AtomicOutput checks the folder and creates nothing.
  io::AtomicOutput{a.output};
  if (!a.csv.empty()) io::AtomicOutput{a.csv};
  if (!a.json.empty()) io::AtomicOutput{a.json};
}

nlohmann::json run_embed_job(const GlobalOptions& g, const EmbedArgs& a, JobInput in,
                             EmbedResult* result_out) {
  EmbedOptions options;
  options.graph = to_graph_options(a.graph);
  options.components = to_component_options(a.graph);
  apply_map_options(a.map, g.seed, options);
  AssessOptions assess = to_assess_options(a.score, g.seed);
  if (!a.no_score && assess.residual) options.residual = ResidualOptions{.seed = g.seed};
  const bool given_graph = in.graph.has_value();
  if (given_graph && (a.linear || a.scale != "none" || a.metric != "euclidean" || a.pre_pca))
    throw OptionError("--linear, --scale, --metric and --pre-pca need points, not --input " +
                      a.input_kind);
  io::MapContents map;

  // Preprocessing: the neighbour search and the scores see the transformed points.
  const PreprocessOptions pre = to_preprocess_options(a);
  if (!given_graph && (pre.scale != Scale::none || pre.metric != Metric::euclidean || pre.pca)) {
    pre.validate(in.points.rows, in.points.cols);
    const PreprocessModel model = fit_preprocess(in.points, pre);
    in.points = apply_preprocess(model, in.points);
    say(g, fmt::format("preprocess: scale {}, metric {}{}", scale_name(model.scale),
                       metric_name(model.metric),
                       model.components ? fmt::format(", {} principal components keeping {:.1f}% "
                                                      "of the variance",
                                                      model.components, 100 * model.variance_kept)
                                        : ""));
    for (const auto& w : model.warnings) say(g, "warning: preprocess: " + w);
    add_preprocess_arrays(model, map.extras);
  }

  const std::size_t n = given_graph ? in.graph->nodes() : in.points.rows;
  if (options.exact && !a.linear) check_exact_memory(a, options, n);
  // Refuse bad score options now, not after the embedding has run.
  if (!a.no_score && !given_graph) validate_score_options(assess, n);
  EmbedResult result = a.linear      ? linear_result(in.points, a.map.dims)
                       : given_graph ? embed_graph(*in.graph, options, stop_token())
                                     : embed_points(in.points, options, stop_token());
  if (!a.linear) print_embedding(g, result);

  nlohmann::json report = {{"input", in.identity}, {"embedding", embed_json(result)}};
  if (!a.no_score) {
    if (given_graph) {
      // No points: neighbourhoods in input space are unknown; the geodesics still score.
      Assessment scores;
      scores.residual = result.residual;
      scores.warnings.push_back(
          "trustworthiness and continuity need points; a given graph has none");
      print_assessment(g, scores);
      report["quality"] = assessment_json(scores);
      map.extras = assessment_arrays(scores);
    } else {
      if (result.residual) assess.residual = false;  // the embedding's own pairs are better
      Assessment scores = assess_map(rows_of(in.points, result.rows), result.coords,
                                     a.linear ? nullptr : &result.geodesic, axis_spectrum(result),
                                     assess, stop_token());
      if (result.residual) scores.residual = result.residual;
      print_assessment(g, scores);
      report["quality"] = assessment_json(scores);
      for (auto& extra : assessment_arrays(scores)) map.extras.push_back(std::move(extra));
    }
  }
  if (!a.linear)
    for (auto& extra : graph_arrays(result)) map.extras.push_back(std::move(extra));
  std::vector<double> nonfinite(in.dropped_rows.begin(), in.dropped_rows.end());
  map.extras.push_back({"/input/dropped_nonfinite_rows",
                        nonfinite,
                        {nonfinite.size()},
                        {{"meaning", "input rows dropped for NaN or infinite values"}}});

  map.coords = result.coords;
  for (std::size_t r : result.rows) map.rows.push_back(in.rows[r]);
  for (std::size_t r : result.landmark_rows) map.landmark_rows.push_back(in.rows[r]);
  map.landmark_coords = result.landmark_coords;
  map.spectrum = axis_spectrum(result).top;
  map.spectrum_attributes = spectrum_json(result);
  if (a.map.keep_geodesics && !a.linear) map.landmark_geodesic = std::move(result.geodesic);
  report["parameters"] = parameters_json(g, a, options, result);
  report["seed"] = g.seed;
  map.attributes = {{"command", "embed"},
                    {"input", in.identity},
                    {"parameters", report["parameters"]},
                    {"seed", g.seed},
                    {"seconds", report["embedding"]["seconds"]}};

  io::write_map(a.output, map);
  if (!a.csv.empty()) io::write_coordinates_csv(a.csv, map.coords, map.rows);
  report["peak_memory_bytes"] = peak_memory_bytes();
  if (!a.json.empty()) write_json_file(a.json, report);
  say(g, fmt::format("wrote {} (peak memory {})", a.output, human_bytes(peak_memory_bytes())));
  if (result_out) *result_out = std::move(result);
  return report;
}

}  // namespace unfurl::app
