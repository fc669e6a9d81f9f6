#include "apps/embed_job.hpp"

#include <fmt/core.h>

#include "apps/memory_guard.hpp"
#include "apps/option_scope.hpp"
#include "apps/report.hpp"
#include "apps/run_info.hpp"
#include "apps/run_record.hpp"
#include "apps/short_circuit_report.hpp"
#include "engine/error.hpp"
#include "engine/linear.hpp"
#include "engine/placement.hpp"
#include "engine/step_store.hpp"
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

PreprocessOptions to_preprocess_options(const EmbedArgs& a) {
  PreprocessOptions o;
  o.scale =
      from_name(a.scale, {Scale::none, Scale::standard, Scale::robust}, scale_name, Scale::none);
  o.metric =
      from_name(a.metric, {Metric::euclidean, Metric::cosine}, metric_name, Metric::euclidean);
  o.pca = a.pre_pca;
  return o;
}

nlohmann::json parameters_json(const EmbedArgs& a, const EmbedOptions& o, const EmbedResult& r) {
  nlohmann::json p = {{"input_kind", a.input_kind},
                      {"mutual", o.graph.mutual},
                      {"search", a.graph.search},
                      {"keep_duplicates", o.graph.keep_duplicates},
                      {"disconnected", a.graph.disconnected},
                      {"scale", a.scale},
                      {"metric", a.metric},
                      {"pre_pca", a.pre_pca},
                      {"linear", a.linear},
                      {"dims", o.spectral.dims},
                      {"landmarks", a.linear    ? std::string("none")
                                    : o.exact() ? std::string("all")
                                                : std::to_string(r.landmarks.landmarks)},
                      {"pick", a.map.pick},
                      {"node_order", node_order_name(r.order)},  // morton is bfs for a graph
                      {"drop_nonfinite", a.input.drop_nonfinite},
                      {"rows", a.input.rows},
                      {"score", !a.no_score},
                      {"score_k", a.score.ks}};
  // --threads is not a parameter of the map: results do not depend on it, and a map made
  // with 1 thread or 2 (or resumed with another count) must be the same bytes.
  p.update(neighbourhood_json(o.graph.neighbourhood));
  return p;
}

// The engine's options for a run on n points (or nodes of a given graph): the defaults that
// depend on the size adapt to it (README, "Small inputs"). Refuses an input below the
// smallest an embedding takes: 3 points, and dims + 1 for a landmark map.
EmbedOptions job_options(const GlobalOptions& g, const EmbedArgs& a, std::size_t n,
                         const char* unit) {
  const std::size_t smallest = std::max<std::size_t>(3, a.map.dims + 1);
  if (n < smallest)
    throw DataError(fmt::format("{}: {} {}; embed needs at least {} for --dims {}", a.input.file, n,
                                unit, smallest, a.map.dims));
  EmbedOptions options;
  options.graph = to_graph_options(a.graph);
  options.components = to_component_options(a.graph);
  apply_map_options(a.map, g.seed, options);
  // The whole spectrum's masses (the non-Euclidean ratio) are a score, and so are the most
  // negative eigenvalues: the map needs neither. Without them exact mode's solver looks for
  // the top pairs alone (at 10,000 points 21 passes over the N x N rows instead of 35).
  options.spectral.mass = !a.no_score;
  options.spectral.negative_end = !a.no_score;
  adapt_graph_k(a.graph, n, options.graph);
  return options;
}

AssessOptions job_assess_options(const GlobalOptions& g, const EmbedArgs& a, std::size_t n) {
  AssessOptions assess = to_assess_options(a.score, g.seed);
  adapt_score_k(a.score, n, assess);
  const std::size_t dimension_k = default_dimension_k(n);
  if (dimension_k > 0)
    assess.dimension = DimensionOptions{.k = dimension_k};
  else
    assess.dimension.reset();
  return assess;
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
      ->transform(whole_number(0, max_count))
      ->capture_default_str();
  add_map_options(cmd, a.map);
  cmd->add_flag("--linear", a.linear, "Plain PCA instead (the linear baseline; no graph)");
  add_score_options(cmd, a.score);
  cmd->add_flag("--no-score", a.no_score, "Skip the quality scores");
  cmd->add_option("--csv", a.csv, "Also write the coordinates as CSV");
  cmd->add_option("--json", a.json, "Also write every figure of the run as JSON");
  cmd->add_option("--max-memory", a.max_memory,
                  "Memory ceiling: refuse a run whose estimated peak is higher (e.g. 8G; default: "
                  "the available memory, or the cgroup limit when lower)")
      ->check(byte_size());
}

void check_job_memory(const GlobalOptions& g, const EmbedArgs& a, const JobSize& size) {
  if (size.points < std::max<std::size_t>(3, a.map.dims + 1)) return;  // job_options refuses it
  check_memory(job_memory_shape(a, job_options(g, a, size.points, "points"), size),
               memory_limit(a.max_memory), size.subject);
}

void check_job_options(const GlobalOptions& g, const EmbedArgs& a, const JobSize& size) {
  const std::size_t rows = size.points, cols = size.columns;
  const EmbedOptions options = job_options(g, a, rows, "points");
  const PreprocessOptions pre = to_preprocess_options(a);
  pre.validate(rows, cols);
  if (a.linear) {
    LinearOptions lo;
    lo.dims = a.map.dims;
    lo.validate(pre.pca ? pre.pca : cols);
  } else {
    options.graph.validate(rows);
    options.validate(rows);
  }
  if (!a.no_score) job_assess_options(g, a, rows).validate(rows);
  check_job_memory(g, a, size);
}

JobOutputs add_job_outputs(io::OutputSet& outputs, const EmbedArgs& a, const std::string& map_label,
                           const std::string& json_label) {
  JobOutputs where;
  where.map = outputs.add(a.output, map_label);
  if (!a.csv.empty()) where.csv = outputs.add(a.csv, "--csv");
  if (!a.json.empty()) where.json = outputs.add(a.json, json_label);
  return where;
}

nlohmann::json run_embed_job(const GlobalOptions& g, const EmbedArgs& a, JobInput in,
                             io::OutputSet& outputs, const JobOutputs& where,
                             EmbedResult* result_out) {
  const bool given_graph = in.graph.has_value();
  // Preprocessing keeps the rows, so the size is known before it.
  const std::size_t n = given_graph ? in.graph->nodes() : in.points.rows;
  EmbedOptions options = job_options(g, a, n, given_graph ? "nodes" : "points");
  AssessOptions assess = job_assess_options(g, a, n);
  if (!a.no_score && assess.residual) options.residual = ResidualOptions{.seed = g.seed};
  // Refused before any work when over the limit (apps/memory_guard.hpp).
  const MemoryLimit memory_ceiling = memory_limit(a.max_memory);
  const MemoryEstimate memory =
      check_memory(job_memory_shape(a, options,
                                    {.points = n,
                                     .columns = given_graph ? 0 : in.points.cols,
                                     .graph_edges = given_graph ? in.graph->directed_edges() : 0,
                                     .held_bytes = in.held_bytes}),
                   memory_ceiling);
  say(g,
      fmt::format("memory: estimated peak {} (step {}), limit {} ({})", human_bytes(memory.peak),
                  memory.peak_of().step, human_bytes(memory_ceiling.bytes), memory_ceiling.source));
  io::MapContents map;
  // Points not from a reader (demo) were not centred: record zeros, so that `score` reads
  // them back as they were used.
  if (!given_graph && in.centres.empty()) in.centres.assign(in.points.cols, 0.0);

  // Preprocessing: the neighbour search and the scores see the transformed points.
  const PreprocessOptions pre = to_preprocess_options(a);
  if (!given_graph && (pre.scale != Scale::none || pre.metric != Metric::euclidean || pre.pca)) {
    pre.validate(in.points.rows, in.points.cols);
    const PreprocessModel model = fit_preprocess(in.points, pre);
    std::vector<std::uint64_t> row_keys = std::move(in.points.row_keys);
    in.points = apply_preprocess(model, in.points);
    in.points.row_keys = std::move(row_keys);  // duplicates still compare the rows as read
    say(g, fmt::format("preprocess: scale {}, metric {}{}", scale_name(model.scale),
                       metric_name(model.metric),
                       model.components ? fmt::format(", {} principal components keeping {:.1f}% "
                                                      "of the variance",
                                                      model.components, 100 * model.variance_kept)
                                        : ""));
    for (const auto& w : model.warnings) say(g, "warning: preprocess: " + w);
    map.preprocess = model;
  }

  // Refuse bad score options now, not after the embedding has run.
  if (!a.no_score && !given_graph) assess.validate(n);
  EmbedResult result = a.linear ? linear_result(in.points, a.map.dims)
                       : given_graph
                           ? embed_graph(*in.graph, options, stop_token(), in.saved_steps)
                           : embed_points(in.points, options, stop_token(), in.saved_steps);
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
      map.quality = quality_record(scores);
    } else {
      // The graph stage's kNN lists already gave the intrinsic dimension (no second search).
      if (result.dimension) assess.dimension.reset();
      if (result.residual) assess.residual = false;  // the embedding's own pairs are better
      std::optional<Assessment> kept =
          in.saved_steps ? in.saved_steps->load_scores() : std::nullopt;
      Assessment scores = kept ? std::move(*kept)
                               : assess_map(rows_of(in.points, result.rows), result.coords,
                                            a.linear ? nullptr : &result.geodesic,
                                            axis_spectrum(result), assess, stop_token());
      if (in.saved_steps && !kept) in.saved_steps->save_scores(scores);
      if (result.dimension) scores.dimension = result.dimension;
      if (result.residual) scores.residual = result.residual;
      print_assessment(g, scores);
      report["quality"] = assessment_json(scores);
      map.quality = quality_record(scores);
    }
  }
  report_short_circuits(g, result, in.rows, report, map);
  if (!a.linear) map.graph = graph_record(result, in.rows);
  if (!in.centres.empty()) map.input.centres = in.centres;
  map.input.dropped_nonfinite_rows = in.dropped_rows;

  map.coords = result.coords;
  for (std::size_t r : result.rows) map.rows.push_back(in.rows[r]);
  for (std::size_t r : result.landmark_rows) map.landmark_rows.push_back(in.rows[r]);
  map.landmark_coords = result.landmark_coords;
  map.spectrum = axis_spectrum(result).top;
  map.spectrum_attributes = spectrum_json(result);
  if (a.map.keep_geodesics && !a.linear) {
    // What `unfurl place` needs beside the rows (io/map_record.hpp, /placement).
    map.placement = io::MapPlacementRecord{
        .triangulation = triangulation_of_map(result.geodesic, result.landmark_coords,
                                              result.spectrum, result.coords.cols),
        .placed = std::nullopt};
    map.landmark_geodesic = std::move(result.geodesic);
  }
  report["parameters"] = without_unused(embed_run_shape(a), parameters_json(a, options, result));
  report["seed"] = g.seed;
  map.attributes = {
      {"command", "embed"},
      {"input", in.identity},
      {"parameters", report["parameters"]},
      {"seed", g.seed},
      {"seconds", report["embedding"]["seconds"]},
      {"run", run_record(in.resumed_from ? *in.resumed_from : std::vector<std::string>{})}};
  report["run"] = map.attributes["run"];

  io::write_map(outputs, where.map, map);
  if (where.csv) io::write_coordinates_csv(outputs, *where.csv, map.coords, map.rows);
  report["peak_memory_bytes"] = peak_memory_bytes();
  report["memory_estimate"] = memory_json(memory, memory_ceiling);
  if (where.json) write_json_file(outputs, *where.json, report);
  if (where.plots)
    write_run_plots(outputs, *where.plots, std::move(map),
                    std::filesystem::path(a.output).filename().string(), report);
  outputs.commit();
  say(g, fmt::format("wrote {} (peak memory {})", a.output, human_bytes(peak_memory_bytes())));
  if (result_out) *result_out = std::move(result);
  return report;
}

}  // namespace unfurl::app
