#include <unistd.h>

#include <cmath>
#include <limits>
#include <string>
#include <utility>

#include "engine/error.hpp"
#include "io/detail/graph_input_format.hpp"
#include "io/detail/text_lines.hpp"
#include "io/graph_input.hpp"
#include "io/hdf5_file.hpp"

namespace unfurl::io {
namespace {

// Ids stay below 2^31 - 1 so that a node count fits the engine's 32-bit ids with room.
constexpr double max_id = 2147483646.0;

// Memory the engine needs per node and per edge of a given graph, whatever the options: CSR
// offsets (8 bytes), node order, component and landmark bookkeeping, one float32 geodesic
// value per landmark for the fewest landmarks (about 12): 64 bytes a node; the CSR of both
// directions and the edge list read: 32 bytes an edge. Common practice, no source: a floor,
// meant to refuse the impossible, not to predict the peak.
constexpr double kBytesPerNode = 64.0;
constexpr double kBytesPerEdge = 32.0;

std::string gigabytes(double bytes) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.1f GB", bytes / 1e9);
  return buf;
}

std::string number_text(double v) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.17g", v);
  return buf;
}

// Checks one edge and appends it (or counts a dropped self loop). `where` names the file and
// the line or edge for messages.
class EdgeCollector {
 public:
  EdgeCollector(const EdgeListOptions& o, EdgeList& out, std::string source)
      : options_(o), out_(out), source_(std::move(source)) {}

  void add(double i, double j, double len, const std::string& where) {
    const NodeId a = id(i, "i", where), b = id(j, "j", where);
    if (!std::isfinite(len))
      throw DataError(where + ": length " + number_text(len) + " is not finite");
    if (len < 0) throw DataError(where + ": length " + number_text(len) + " is negative");
    if (len > std::numeric_limits<float>::max())
      throw DataError(where + ": length " + number_text(len) + " does not fit float32");
    if (a == b) {
      if (len != 0)
        throw DataError(where + ": self loop " + std::to_string(a) + " -- " + std::to_string(a) +
                        " with length " + number_text(len) + " (only length 0 can be dropped)");
      ++out_.dropped_self_loops;
      return;
    }
    out_.from.push_back(a);
    out_.to.push_back(b);
    out_.length.push_back(static_cast<float>(len));
    largest_ = std::max<std::size_t>(largest_, std::max(a, b));
    any_ = true;
  }

  // The node count comes from the largest id: one stray id of 2^31 means two billion nodes.
  // Refuse before the engine allocates per-node arrays that cannot fit.
  void finish() {
    out_.nodes = options_.nodes ? options_.nodes : (any_ ? largest_ + 1 : 0);
    const double need = static_cast<double>(out_.nodes) * kBytesPerNode +
                        static_cast<double>(out_.from.size()) * kBytesPerEdge;
    const long pages = sysconf(_SC_PHYS_PAGES), page_size = sysconf(_SC_PAGE_SIZE);
    const double have = static_cast<double>(pages) * static_cast<double>(page_size);
    if (pages > 0 && page_size > 0 && need > have)
      throw ResourceError(
          source_ + ": node ids up to " + std::to_string(out_.nodes - 1) + " make a graph of " +
          std::to_string(out_.nodes) + " nodes, which needs about " + gigabytes(need) +
          " to embed, more than this machine's " + gigabytes(have) + "; renumber the ids 0..n-1");
  }

 private:
  NodeId id(double v, const char* which, const std::string& where) const {
    if (!std::isfinite(v) || v != std::floor(v))
      throw DataError(where + ": node id " + which + " = " + number_text(v) + " is not an integer");
    if (v < 0)
      throw DataError(where + ": node id " + which + " = " + number_text(v) + " is negative");
    if (v > max_id)
      throw DataError(where + ": node id " + which + " = " + number_text(v) +
                      " is too large (at most 2147483646)");
    if (options_.nodes && v >= static_cast<double>(options_.nodes))
      throw DataError(where + ": node id " + which + " = " + number_text(v) +
                      " is not below the node count " + std::to_string(options_.nodes));
    return static_cast<NodeId>(v);
  }

  const EdgeListOptions& options_;
  EdgeList& out_;
  std::string source_;
  std::size_t largest_ = 0;
  bool any_ = false;
};

EdgeList read_csv(const std::filesystem::path& path, const EdgeListOptions& o) {
  EdgeList out;
  EdgeCollector edges(o, out, path.string());
  detail::LineReader lines(path);
  std::vector<std::string_view> fields;
  std::string_view line;
  bool first = true;
  char delimiter = 0;
  double ignored = 0;
  while (lines.next(line)) {
    if ((lines.line_number() & 0xfffff) == 0) o.stop.check("reading an edge list");
    if (detail::skippable(line)) continue;
    if (delimiter == 0) delimiter = detail::sniff_delimiter(line);
    detail::split_fields(line, delimiter, fields);
    const std::string where = path.string() + ": line " + std::to_string(lines.line_number());
    if (first) {
      first = false;
      if (!fields.empty() &&
          detail::parse_number(fields[0], ignored) == detail::Number::not_number) {
        if (fields.size() != 3)
          throw DataError(where + ": header has " + std::to_string(fields.size()) +
                          " fields, expected 3 (i, j, length)");
        continue;  // the header
      }
    }
    if (fields.size() != 3)
      throw DataError(where + ": expected 3 fields (i, j, length), got " +
                      std::to_string(fields.size()));
    double v[3];
    for (int k = 0; k < 3; ++k) {
      const std::string_view field = fields[static_cast<std::size_t>(k)];
      const detail::Number parsed = detail::parse_number(field, v[k]);
      if (parsed != detail::Number::ok)
        throw DataError(where + ": field " + std::to_string(k + 1) + " '" +
                        detail::printable(field) +
                        (parsed == detail::Number::too_large ? "' lies outside the float64 range"
                                                             : "' is not a number"));
    }
    edges.add(v[0], v[1], v[2], where);
  }
  edges.finish();
  return out;
}

EdgeList read_hdf5(const std::filesystem::path& path, const EdgeListOptions& o) {
  H5Reader in(path, o.stop);
  std::vector<double> i, j, len;
  if (!o.table_dataset.empty()) {
    const auto info = in.require_rank(o.table_dataset, 2);
    if (info.dims[1] != 3)
      throw DataError(path.string() + ": " + o.table_dataset + ": has " +
                      std::to_string(info.dims[1]) + " columns, expected 3 (i, j, length)");
    const auto table = in.read<double>(o.table_dataset);
    const std::size_t e = info.dims[0];
    i.resize(e);
    j.resize(e);
    len.resize(e);
    for (std::size_t k = 0; k < e; ++k) {
      i[k] = table[3 * k];
      j[k] = table[3 * k + 1];
      len[k] = table[3 * k + 2];
    }
  } else {
    for (const std::string* name : {&o.i_dataset, &o.j_dataset, &o.length_dataset})
      in.require_rank(*name, 1);
    i = in.read<double>(o.i_dataset);
    j = in.read<double>(o.j_dataset);
    len = in.read<double>(o.length_dataset);
    if (j.size() != i.size() || len.size() != i.size())
      throw DataError(path.string() + ": " + o.i_dataset + ", " + o.j_dataset + " and " +
                      o.length_dataset + " have " + std::to_string(i.size()) + ", " +
                      std::to_string(j.size()) + " and " + std::to_string(len.size()) +
                      " entries; they must match");
  }
  EdgeList out;
  EdgeCollector edges(o, out, path.string());
  const std::string source =
      path.string() + ": " + (o.table_dataset.empty() ? o.i_dataset : o.table_dataset) + ": edge ";
  for (std::size_t k = 0; k < i.size(); ++k) {
    if ((k & 0xfffff) == 0) o.stop.check("reading an edge list");
    edges.add(i[k], j[k], len[k], source + std::to_string(k));
  }
  edges.finish();
  return out;
}

}  // namespace

void EdgeListOptions::validate() const {
  if (format == GraphInputFormat::npy)
    throw OptionError("EdgeListOptions.format",
                      "npy holds matrices, not edge lists; use csv or hdf5");
  if (nodes > 2147483647u)
    throw OptionError("EdgeListOptions.nodes",
                      "at most 2147483647 nodes, got " + std::to_string(nodes));
  const std::pair<const char*, const std::string*> datasets[] = {
      {"EdgeListOptions.i_dataset", &i_dataset},
      {"EdgeListOptions.j_dataset", &j_dataset},
      {"EdgeListOptions.length_dataset", &length_dataset},
      {"EdgeListOptions.table_dataset", &table_dataset}};
  for (const auto& [field, d] : datasets)
    if (!d->empty() && d->front() != '/')
      throw OptionError(field, "HDF5 dataset paths start with '/', got '" + *d + "'");
  if (table_dataset.empty() && (i_dataset.empty() || j_dataset.empty() || length_dataset.empty()))
    throw OptionError("EdgeListOptions.table_dataset",
                      "i, j and length datasets must all be named");
}

EdgeList read_edge_list(const std::filesystem::path& path, const EdgeListOptions& options) {
  options.validate();
  switch (detail::resolve_format(options.format, path)) {
    case GraphInputFormat::hdf5:
      return read_hdf5(path, options);
    case GraphInputFormat::npy:
      throw DataError(path.string() +
                      ": holds an NPY array; edge lists are read from CSV text or HDF5");
    default:
      return read_csv(path, options);
  }
}

}  // namespace unfurl::io
