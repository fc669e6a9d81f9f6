// /quality/short_circuit_rows and /quality/short_circuit_figures (io/map_record.hpp).
#include <cmath>

#include "engine/error.hpp"
#include "io/detail/h5_json.hpp"
#include "io/detail/map_groups.hpp"

namespace unfurl::io::detail {
namespace {

using nlohmann::json;

const char* const kRows = "/quality/short_circuit_rows";
const char* const kFigures = "/quality/short_circuit_figures";
constexpr std::size_t kFigureColumns = 5;  // length, scale_from, scale_to, detour, detour_bound

[[noreturn]] void bad(const H5Reader& in, const std::string& object, const std::string& what) {
  throw DataError(in.path().string() + ": " + object + ": " + what);
}

std::int64_t count_attribute(const H5Reader& in, const json& at, const char* name) {
  if (!at.contains(name) || !at.at(name).is_number_integer() || at.at(name).get<std::int64_t>() < 0)
    bad(in, kRows, std::string("attribute '") + name + "' is missing or not a count");
  return at.at(name).get<std::int64_t>();
}

double factor_attribute(const H5Reader& in, const json& at, const char* name) {
  if (!at.contains(name) || !at.at(name).is_number())
    bad(in, kRows, std::string("attribute '") + name + "' is missing or not a number");
  return at.at(name).get<double>();
}

}  // namespace

void write_short_circuits(H5Writer& out, const MapShortCircuitRecord& r) {
  std::vector<std::int64_t> rows;
  std::vector<double> figures;
  for (const auto& s : r.worst) {
    rows.insert(rows.end(), {s.from_row, s.to_row});
    figures.insert(figures.end(), {s.length, s.scale_from, s.scale_to, s.detour, s.detour_bound});
  }
  out.write(kRows, rows, {r.worst.size(), 2});
  write_json_attributes(out, kRows,
                        {{"meaning",
                          "input rows joined by each listed short-circuit suspect, worst first: "
                          "an edge longer than length_factor x the median of each end's other "
                          "edges whose removal lengthens the path between its ends over "
                          "detour_factor x"},
                         {"suspects", r.suspects},
                         {"long_edges", r.long_edges},
                         {"undecided", r.undecided},
                         {"edges", r.edges},
                         {"length_factor", r.length_factor},
                         {"detour_factor", r.detour_factor}});
  out.write(kFigures, figures, {r.worst.size(), kFigureColumns});
  out.set_string_attribute(kFigures, "meaning",
                           "per suspect: length, scale_from, scale_to (median of each end's "
                           "other edges), detour (+inf: not found), detour_bound (the detour is "
                           "at least this; +inf: no other path)");
}

std::optional<MapShortCircuitRecord> read_short_circuits(const H5Reader& in,
                                                         std::set<std::string>& known) {
  if (!in.has_dataset(kRows)) return std::nullopt;
  MapShortCircuitRecord r;
  const auto dims = in.require_rank(kRows, 2).dims;
  if (dims[1] != 2) bad(in, kRows, "is not S x 2 (from row, to row)");
  if (!in.has_dataset(kFigures)) bad(in, kFigures, "missing (with short_circuit_rows)");
  const auto figure_dims = in.require_rank(kFigures, 2).dims;
  if (figure_dims[0] != dims[0] || figure_dims[1] != kFigureColumns)
    bad(in, kFigures, "is not S x 5 with S the suspects of short_circuit_rows");
  const std::vector<std::int64_t> rows = in.read<std::int64_t>(kRows);
  const std::vector<double> figures = in.read<double>(kFigures);
  known.insert(kRows);
  known.insert(kFigures);
  for (std::size_t s = 0; s < dims[0]; ++s) {
    if (rows[2 * s] < 0 || rows[2 * s + 1] < 0)
      bad(in, kRows, "entry " + std::to_string(s) + " names a negative row");
    const double* f = figures.data() + kFigureColumns * s;
    r.worst.push_back({rows[2 * s], rows[2 * s + 1], f[0], f[1], f[2], f[3], f[4]});
  }
  const json at = read_json_attributes(in, kRows);
  r.suspects = count_attribute(in, at, "suspects");
  r.long_edges = count_attribute(in, at, "long_edges");
  r.undecided = count_attribute(in, at, "undecided");
  r.edges = count_attribute(in, at, "edges");
  r.length_factor = factor_attribute(in, at, "length_factor");
  r.detour_factor = factor_attribute(in, at, "detour_factor");
  if (r.suspects < static_cast<std::int64_t>(r.worst.size()))
    bad(in, kRows, "lists more suspects than its attribute 'suspects' counts");
  return r;
}

}  // namespace unfurl::io::detail
