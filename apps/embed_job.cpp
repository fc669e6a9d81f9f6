#include "apps/embed_job.hpp"

#include <fmt/core.h>

#include "apps/report.hpp"
#include "apps/run_info.hpp"
#include "engine/error.hpp"
#include "io/atomic_output.hpp"
#include "io/csv_writer.hpp"
#include "io/map_file.hpp"

namespace unfurl::app {
namespace {

// The input points of the map rows (drops and the component policy removed some).
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

nlohmann::json parameters_json(const GlobalOptions& g, const EmbedArgs& a, const EmbedOptions& o,
                               const EmbedResult& r) {
  return {{"k", o.graph.k},
          {"radius", o.graph.radius},
          {"mutual", o.graph.mutual},
          {"search", a.graph.search},
          {"keep_duplicates", o.graph.keep_duplicates},
          {"disconnected", a.graph.disconnected},
          {"dims", o.spectral.dims},
          {"landmarks", o.exact ? std::string("all") : std::to_string(r.landmarks.landmarks)},
          {"pick", a.map.pick},
          {"drop_nonfinite", a.input.drop_nonfinite},
          {"rows", a.input.rows},
          {"score", !a.no_score},
          {"score_k", a.score.ks},
          {"threads", g.threads}};
}

}  // namespace

void add_embed_job_options(CLI::App* cmd, EmbedArgs& a) {
  add_graph_options(cmd, a.graph);
  add_map_options(cmd, a.map);
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

nlohmann::json run_embed_job(const GlobalOptions& g, const EmbedArgs& a,
                             const io::PointReadResult& in, const nlohmann::json& input,
                             EmbedResult* result_out) {
  EmbedOptions options;
  options.graph = to_graph_options(a.graph);
  options.components = to_component_options(a.graph);
  apply_map_options(a.map, g.seed, options);
  const AssessOptions assess = to_assess_options(a.score, g.seed);
  if (options.exact) check_exact_memory(a, options, in.points.rows);

  EmbedResult result = embed_points(in.points, options, stop_token());
  print_embedding(g, result);

  nlohmann::json report = {{"input", input}, {"embedding", embed_json(result)}};
  io::MapContents map;
  if (!a.no_score) {
    const Assessment scores = assess_map(rows_of(in.points, result.rows), result.coords,
                                         &result.geodesic, result.spectrum, assess, stop_token());
    print_assessment(g, scores);
    report["quality"] = assessment_json(scores);
    map.extras = assessment_arrays(scores);
  }
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
  map.spectrum = result.spectrum;
  if (a.map.keep_geodesics) map.landmark_geodesic = std::move(result.geodesic);
  report["parameters"] = parameters_json(g, a, options, result);
  report["seed"] = g.seed;
  map.attributes = {{"command", "embed"},
                    {"input", input},
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
