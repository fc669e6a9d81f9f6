#include "apps/short_circuit_report.hpp"

#include <fmt/core.h>

#include <cmath>
#include <cstdio>

namespace unfurl::app {
namespace {

using nlohmann::json;

// JSON has no infinity: a missing figure is null.
json finite_or_null(double v) {
  return std::isfinite(v) ? json(v) : json(nullptr);
}

std::string detour_text(const ShortCircuitEdge& e) {
  if (e.separates) return "no other path";
  return fmt::format("detour {}{:.1f}x", std::isfinite(e.detour) ? "" : "over ", e.stretch());
}

}  // namespace

std::string short_circuit_warning(const ShortCircuitResult& r,
                                  std::span<const std::int64_t> input_row, std::size_t most) {
  const ShortCircuitSummary& s = r.summary;
  if (s.suspects == 0) return {};
  std::string worst;
  for (std::size_t i = 0; i < r.worst.size() && i < most; ++i) {
    const ShortCircuitEdge& e = r.worst[i];
    worst += fmt::format("{}rows {} and {} (length {:.4g}, {})", i ? "; " : "", input_row[e.from],
                         input_row[e.to], e.length, detour_text(e));
  }
  if (s.suspects > r.worst.size() || r.worst.size() > most) worst += "; ...";
  return fmt::format(
      "{} short-circuit suspect{} (edges over {:g}x the neighbour scale at both ends whose "
      "removal lengthens the path between them over {:g}x): {}. The map may be folded across "
      "them; try a smaller --k or a --radius",
      s.suspects, s.suspects == 1 ? "" : "s", s.length_factor, s.detour_factor, worst);
}

json short_circuit_json(const ShortCircuitResult& r, std::span<const std::int64_t> input_row) {
  const ShortCircuitSummary& s = r.summary;
  json worst = json::array();
  for (const ShortCircuitEdge& e : r.worst)
    worst.push_back({{"from_row", input_row[e.from]},
                     {"to_row", input_row[e.to]},
                     {"length", e.length},
                     {"scale_from", e.scale_from},
                     {"scale_to", e.scale_to},
                     {"detour", finite_or_null(e.detour)},
                     {"detour_at_least", finite_or_null(e.detour_bound)},
                     {"separates", e.separates},
                     {"stretch_at_least", finite_or_null(e.stretch())}});
  json warnings = s.warnings;
  if (const std::string w = short_circuit_warning(r, input_row); !w.empty()) warnings.push_back(w);
  return {{"suspects", s.suspects},
          {"long_edges", s.long_edges},
          {"undecided", s.undecided},
          {"edges", s.edges},
          {"length_factor", s.length_factor},
          {"detour_factor", s.detour_factor},
          {"seconds", s.seconds},
          {"worst", worst},
          {"warnings", warnings}};
}

io::MapShortCircuitRecord short_circuit_record(const ShortCircuitResult& r,
                                               std::span<const std::int64_t> input_row) {
  const ShortCircuitSummary& s = r.summary;
  io::MapShortCircuitRecord m;
  for (const ShortCircuitEdge& e : r.worst)
    m.worst.push_back({input_row[e.from], input_row[e.to], e.length, e.scale_from, e.scale_to,
                       e.detour, e.detour_bound});
  m.suspects = static_cast<std::int64_t>(s.suspects);
  m.long_edges = static_cast<std::int64_t>(s.long_edges);
  m.undecided = static_cast<std::int64_t>(s.undecided);
  m.edges = static_cast<std::int64_t>(s.edges);
  m.length_factor = s.length_factor;
  m.detour_factor = s.detour_factor;
  return m;
}

void report_short_circuits(const GlobalOptions& g, const EmbedResult& result,
                           std::span<const std::int64_t> input_row, json& report,
                           io::MapContents& map) {
  if (!result.short_circuits) return;
  const ShortCircuitResult& r = *result.short_circuits;
  if (!g.quiet) {
    for (const auto& w : r.summary.warnings) fmt::print(stderr, "warning: short circuits: {}\n", w);
    if (const std::string w = short_circuit_warning(r, input_row); !w.empty())
      fmt::print(stderr, "warning: {}\n", w);
  }
  report["short_circuits"] = short_circuit_json(r, input_row);
  map.quality.short_circuits = short_circuit_record(r, input_row);
}

}  // namespace unfurl::app
