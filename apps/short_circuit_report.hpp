// How a run reports the graph's short-circuit suspects (engine/short_circuit.hpp): a warning
// line on stderr, a block of the run's JSON (whose "warnings" the report page lists) and the
// map's /quality/short_circuit_* record. Endpoints are shown as input rows.
#pragma once

#include <cstdint>
#include <span>
#include <string>

#include <nlohmann/json.hpp>

#include "apps/command.hpp"
#include "engine/embedding.hpp"
#include "engine/short_circuit.hpp"
#include "io/map_record.hpp"

namespace unfurl::app {

// `input_row[p]`: the input row of point (or node) p, whose numbers the result's endpoints are.
nlohmann::json short_circuit_json(const ShortCircuitResult& r,
                                  std::span<const std::int64_t> input_row);
io::MapShortCircuitRecord short_circuit_record(const ShortCircuitResult& r,
                                               std::span<const std::int64_t> input_row);
// The warning (without "warning: "): the count, the worst `most` and what to do; "" when there
// are no suspects.
std::string short_circuit_warning(const ShortCircuitResult& r,
                                  std::span<const std::int64_t> input_row, std::size_t most = 3);

// The embed job's one call: when the run checked its graph, prints the warning on stderr
// (unless --quiet), adds report["short_circuits"] and the map's record.
void report_short_circuits(const GlobalOptions& g, const EmbedResult& result,
                           std::span<const std::int64_t> input_row, nlohmann::json& report,
                           io::MapContents& map);

}  // namespace unfurl::app
