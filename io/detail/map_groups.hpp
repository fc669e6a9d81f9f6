// Internal: the groups of a map file beyond the map itself (/graph, /quality, /preprocess,
// /input, /placement), each written and read in full. Layout: io/map_record.hpp. Readers take the
// file's format version and convert what version 1 stored otherwise.
#pragma once

#include <cstdint>
#include <optional>
#include <set>
#include <string>
#include <vector>

#include "io/hdf5_file.hpp"
#include "io/map_record.hpp"

namespace unfurl::io::detail {

void write_graph_group(H5Writer& out, const MapGraphRecord& graph);
void write_quality_group(H5Writer& out, const MapQualityRecord& quality);
void write_preprocess_group(H5Writer& out, const PreprocessModel& model);
void write_input_group(H5Writer& out, const MapInputRecord& input);
void write_placement_group(H5Writer& out, const MapPlacementRecord& placement);

// Each reader adds the datasets it consumed to `known`, so that the rest become extras;
// `n` is the number of map rows, which scored rows must name.
std::optional<MapGraphRecord> read_graph_group(const H5Reader& in, std::int64_t version,
                                               std::set<std::string>& known);
MapQualityRecord read_quality_group(const H5Reader& in, std::int64_t version, std::size_t n,
                                    std::set<std::string>& known);
std::optional<PreprocessModel> read_preprocess_group(const H5Reader& in,
                                                     std::set<std::string>& known);
MapInputRecord read_input_group(const H5Reader& in, std::int64_t version,
                                std::set<std::string>& known);
// `n`, `m` and `l`: the map's rows, axes and landmarks, which the arrays must match.
std::optional<MapPlacementRecord> read_placement_group(const H5Reader& in, std::int64_t version,
                                                       std::size_t n, std::size_t m, std::size_t l,
                                                       std::set<std::string>& known);

// /quality/short_circuit_*, part of the quality group (io/detail/map_short_circuits.cpp).
void write_short_circuits(H5Writer& out, const MapShortCircuitRecord& record);
std::optional<MapShortCircuitRecord> read_short_circuits(const H5Reader& in,
                                                         std::set<std::string>& known);

// Row ids (or counts) of a 1-D dataset: int64 storage in version 2, float64 holding whole
// numbers >= 0 in version 1. DataError naming the dataset and the entry otherwise.
std::vector<std::int64_t> read_ids(const H5Reader& in, const std::string& dataset,
                                   std::int64_t version);

}  // namespace unfurl::io::detail
