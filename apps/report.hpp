// What a run tells its user and stores with its map: one JSON document per run, built once
// and used three ways (the text summary on stdout, --json FILE, the map's attributes and
// /quality, /graph datasets).
#pragma once

#include <nlohmann/json.hpp>
#include <span>
#include <string>
#include <vector>

#include "apps/command.hpp"
#include "engine/assessment.hpp"
#include "engine/embedding.hpp"
#include "io/atomic_output.hpp"
#include "io/map_file.hpp"

namespace unfurl::app {

nlohmann::json graph_json(const GraphSummary& s);
nlohmann::json embed_json(const EmbedResult& r);
nlohmann::json assessment_json(const Assessment& a);

// Which eigenvalues were computed and the whole spectrum's masses (exact or estimated): the
// attributes of the map's /spectrum and part of the JSON's "spectral" block.
nlohmann::json spectrum_json(const EmbedResult& r);
// What the scores need of the spectrum: of a run, or of a map file's /spectrum and attributes.
AxisSpectrum axis_spectrum(const EmbedResult& r);
AxisSpectrum axis_spectrum(const std::vector<double>& spectrum, const nlohmann::json& attributes);

// The map's /quality (scores, curves, per-point terms) and /graph records. `input_rows` gives
// the input row of each point (or node) of the run, as the map's row ids.
io::MapQualityRecord quality_record(const Assessment& a);
io::MapGraphRecord graph_record(const EmbedResult& r, std::span<const std::int64_t> input_rows);

// Human-readable lines.
void print_graph(const GlobalOptions& g, const GraphSummary& s);
void print_embedding(const GlobalOptions& g, const EmbedResult& r);
void print_assessment(const GlobalOptions& g, const Assessment& a);

// Writes `doc` (pretty-printed JSON) into output `output` of `outputs`.
void write_json_file(io::OutputSet& outputs, std::size_t output, const nlohmann::json& doc);

}  // namespace unfurl::app
