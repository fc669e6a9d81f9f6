#include "apps/memory_guard.hpp"

#include <omp.h>

#include <fmt/core.h>

#include "apps/args.hpp"
#include "apps/memory_limit.hpp"
#include "apps/run_info.hpp"
#include "engine/error.hpp"
#include "io/file_description.hpp"

namespace unfurl::app {

MemoryLimit memory_limit(const std::string& max_memory) {
  if (!max_memory.empty()) return {parse_bytes("--max-memory", max_memory), "--max-memory"};
  MemoryCeiling ceiling = system_memory_ceiling();
  return {ceiling.bytes, std::move(ceiling.source)};
}

MemoryShape job_memory_shape(const EmbedArgs& a, const EmbedOptions& o, const JobSize& size) {
  MemoryShape s;
  s.points = size.points;
  s.columns = size.columns;
  s.graph_edges = size.graph_edges;
  s.held_bytes = size.held_bytes;
  if (const auto* nearest = std::get_if<NearestK>(&o.graph.neighbourhood)) {
    s.k = nearest->k;
  } else {
    s.radius = true;  // k keeps its default
  }
  s.exact = o.exact();
  s.linear = a.linear;
  s.spectral = o.spectral;
  if (!s.exact && !s.linear) s.landmarks = o.landmarks.resolved_count(size.points, o.spectral.dims);
  s.threads = static_cast<std::size_t>(std::max(1, omp_get_max_threads()));
  s.score = !a.no_score;
  s.score_ks = std::max<std::size_t>(1, a.score.ks.size());
  const QualityOptions q = to_assess_options(a.score, 0).neighbourhoods;
  const bool exact_scores = q.method == ScoreMethod::exact ||
                            (q.method == ScoreMethod::automatic && size.points <= q.exact_limit);
  s.score_queries = exact_scores ? size.points : std::min(q.sample, size.points);
  s.scan_search =
      size.columns > 0 && choose_search(o.graph.search, size.points, size.columns) == Search::scan;
  s.keep_geodesics = o.keep_geodesics;
  return s;
}

MemoryEstimate check_memory(const MemoryShape& shape, const MemoryLimit& limit,
                            const std::string& subject) {
  MemoryEstimate estimate = estimate_memory(shape);
  if (estimate.peak <= limit.bytes) return estimate;
  const StepMemory& peak = estimate.peak_of();
  const std::string size = !subject.empty() ? subject
                                            : fmt::format("{} {}", shape.points,
                                                          shape.columns == 0 ? "nodes" : "points");
  throw ResourceError(fmt::format(
      "memory: the run would need about {} at its peak (step {}: {}) for {}, over the limit "
      "of {} ({}); use {}, fewer rows (--rows A:B), more ranks or machines{}",
      human_bytes(estimate.peak), peak.step, peak.largest, size, human_bytes(limit.bytes),
      limit.source,
      shape.exact ? "a landmark count instead of --landmarks all" : "fewer landmarks (--landmarks)",
      limit.source == "--max-memory" ? ", or raise --max-memory" : ", or set --max-memory"));
}

nlohmann::json memory_json(const MemoryEstimate& estimate, const MemoryLimit& limit) {
  nlohmann::json steps = nlohmann::json::object();
  for (const StepMemory& s : estimate.steps) steps[s.step] = s.bytes;
  return {{"peak_bytes", estimate.peak},
          {"peak_step", estimate.peak_of().step},
          {"baseline_bytes", estimate.baseline},
          {"steps_bytes", steps},
          {"notes", estimate.notes},
          {"limit_bytes", limit.bytes},
          {"limit_source", limit.source}};
}

std::optional<std::pair<std::size_t, std::size_t>> point_file_shape(const PointInputArgs& input) {
  try {
    const std::string format = io::detect_point_format(input.file, input.format);
    if (format != "hdf5" && format != "npy") return std::nullopt;  // text: rows unknown unread
    const io::FileDescription file = io::describe_file(input.file, format);
    const io::ArrayDescription* points = nullptr;
    const std::string wanted =
        input.dataset.empty() || input.dataset[0] == '/' ? input.dataset : "/" + input.dataset;
    for (const auto& array : file.arrays) {
      if (!array.points_candidate && format == "hdf5") continue;
      if (format == "hdf5" && !wanted.empty() && array.path != wanted) continue;
      if (points) return std::nullopt;  // several candidates: the reader names the choice
      points = &array;
    }
    if (!points || points->shape.empty()) return std::nullopt;
    std::size_t rows = points->shape[0];
    const std::size_t cols = points->shape.size() > 1 ? points->shape[1] : 1;
    if (!input.rows.empty()) {
      const io::RowRange range = io::parse_row_range(input.rows);
      const std::size_t end = std::min<std::size_t>(range.end.value_or(rows), rows);
      if (range.begin >= end) return std::nullopt;  // the reader refuses the range
      rows = end - range.begin;
    }
    return std::pair{rows, cols};
  } catch (const Error&) {
    return std::nullopt;  // the reader reports the file's fault in its own words
  }
}

}  // namespace unfurl::app
