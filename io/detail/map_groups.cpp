#include "io/detail/map_groups.hpp"

#include <algorithm>
#include <cmath>
#include <regex>

#include "engine/error.hpp"
#include "io/detail/h5_json.hpp"

namespace unfurl::io::detail {
namespace {

using nlohmann::json;

[[noreturn]] void bad(const H5Reader& in, const std::string& object, const std::string& what) {
  throw DataError(in.path().string() + ": " + object + ": " + what);
}

void write_with_meaning(H5Writer& out, const std::string& path, const std::string& meaning) {
  out.set_string_attribute(path, "meaning", meaning);
}

template <class T>
void write_vector(H5Writer& out, const std::string& path, const std::vector<T>& values,
                  const std::string& meaning) {
  out.write(path, values, {values.size()});
  write_with_meaning(out, path, meaning);
}

void write_scalar(H5Writer& out, const std::string& path, double value, const json& attributes) {
  out.write(path, std::vector<double>{value}, {});
  write_json_attributes(out, path, attributes);
}

// An attribute of a map dataset read back from JSON: DataError naming it when it is missing
// or of another type.
template <class T>
T attribute(const H5Reader& in, const std::string& object, const json& attrs,
            const std::string& name) {
  if (!attrs.contains(name)) bad(in, object, "no attribute '" + name + "'");
  try {
    return attrs.at(name).get<T>();
  } catch (const json::exception&) {
    bad(in, object, "attribute '" + name + "' is " + attrs.at(name).dump());
  }
}

// A list attribute: h5_json stores an empty list as the JSON text "[]".
template <class T>
std::vector<T> list_attribute(const H5Reader& in, const std::string& object, const json& attrs,
                              const std::string& name) {
  const json* v = attrs.contains(name) ? &attrs.at(name) : nullptr;
  if (v && v->is_string() && v->get<std::string>() == "[]") return {};
  if (v && v->is_number()) return {attribute<T>(in, object, attrs, name)};  // one element
  if (!v || !v->is_array()) bad(in, object, "attribute '" + name + "' is not a list");
  return attribute<std::vector<T>>(in, object, attrs, name);
}

std::vector<double> read_vector(const H5Reader& in, const std::string& path,
                                std::set<std::string>& known) {
  in.require_rank(path, 1);
  known.insert(path);
  return in.read<double>(path);
}

void expect_size(const H5Reader& in, const std::string& path, std::size_t got, std::size_t want,
                 const char* what) {
  if (got != want)
    bad(in, path,
        "has " + std::to_string(got) + " entries, expected " + std::to_string(want) + " (" + what +
            ")");
}

// Version 1 stored the bridges as one B x 3 float64 dataset (from row, to row, length).
std::vector<MapGraphRecord::Bridge> read_bridges(const H5Reader& in, std::int64_t version,
                                                 std::set<std::string>& known) {
  std::vector<MapGraphRecord::Bridge> out;
  if (version == 1) {
    const std::string path = "/graph/bridges";
    if (!in.has_dataset(path)) return out;
    known.insert(path);
    const auto dims = in.require_rank(path, 2).dims;
    if (dims[1] != 3) bad(in, path, "is not B x 3 (from row, to row, length)");
    const std::vector<double> v = in.read<double>(path);
    for (std::size_t b = 0; b < dims[0]; ++b) {
      for (std::size_t c = 0; c < 2; ++c) {
        const double id = v[3 * b + c];
        if (!(id >= 0 && id <= 9007199254740992.0 && id == std::floor(id)))
          bad(in, path, "entry " + std::to_string(b) + " names row " + std::to_string(id));
      }
      out.push_back({static_cast<std::int64_t>(v[3 * b]), static_cast<std::int64_t>(v[3 * b + 1]),
                     v[3 * b + 2]});
    }
    return out;
  }
  const std::string rows_path = "/graph/bridge_rows", lengths_path = "/graph/bridge_lengths";
  if (!in.has_dataset(rows_path)) return out;
  known.insert(rows_path);
  const auto dims = in.require_rank(rows_path, 2).dims;
  if (dims[1] != 2) bad(in, rows_path, "is not B x 2 (from row, to row)");
  const std::vector<std::int64_t> rows = in.read<std::int64_t>(rows_path);
  const std::vector<double> lengths = read_vector(in, lengths_path, known);
  expect_size(in, lengths_path, lengths.size(), dims[0], "one per bridge");
  for (std::size_t b = 0; b < dims[0]; ++b) {
    if (rows[2 * b] < 0 || rows[2 * b + 1] < 0)
      bad(in, rows_path, "entry " + std::to_string(b) + " names a negative row");
    out.push_back({rows[2 * b], rows[2 * b + 1], lengths[b]});
  }
  return out;
}

}  // namespace

std::vector<std::int64_t> read_ids(const H5Reader& in, const std::string& dataset,
                                   std::int64_t version) {
  in.require_rank(dataset, 1);
  std::vector<std::int64_t> ids;
  if (version >= 2) {
    ids = in.read<std::int64_t>(dataset);
  } else {
    for (double v : in.read<double>(dataset)) {
      // Whole numbers up to 2^53 are exact in float64; anything else is not an id.
      if (!(v >= 0 && v <= 9007199254740992.0 && v == std::floor(v)))
        bad(in, dataset,
            "entry " + std::to_string(ids.size()) + " is " + std::to_string(v) +
                ", not a whole number >= 0");
      ids.push_back(static_cast<std::int64_t>(v));
    }
  }
  for (std::size_t i = 0; i < ids.size(); ++i)
    if (ids[i] < 0) bad(in, dataset, "entry " + std::to_string(i) + " is negative");
  return ids;
}

void write_graph_group(H5Writer& out, const MapGraphRecord& g) {
  if (g.degree)
    write_vector(out, "/graph/degree",
                 std::vector<std::int64_t>(g.degree->begin(), g.degree->end()), "min, median, max");
  if (g.edge_length)
    write_vector(out, "/graph/edge_length",
                 std::vector<double>(g.edge_length->begin(), g.edge_length->end()),
                 "min, 5%, median, 95%, max");
  write_vector(out, "/graph/component_sizes", g.component_sizes, "largest first");
  write_vector(out, "/graph/dropped_rows", g.dropped_rows,
               "input rows outside the embedded component");
  if (g.bridges.empty()) return;
  std::vector<std::int64_t> rows;
  std::vector<double> lengths;
  for (const auto& b : g.bridges) {
    rows.insert(rows.end(), {b.from_row, b.to_row});
    lengths.push_back(b.length);
  }
  out.write("/graph/bridge_rows", rows, {g.bridges.size(), 2});
  write_with_meaning(out, "/graph/bridge_rows", "input rows joined by each edge added to connect");
  write_vector(out, "/graph/bridge_lengths", lengths, "length of each edge added to connect");
}

std::optional<MapGraphRecord> read_graph_group(const H5Reader& in, std::int64_t version,
                                               std::set<std::string>& known) {
  if (!in.has_dataset("/graph/component_sizes")) return std::nullopt;
  MapGraphRecord g;
  if (in.has_dataset("/graph/degree")) {
    const auto v = read_ids(in, "/graph/degree", version);
    expect_size(in, "/graph/degree", v.size(), 3, "min, median, max");
    g.degree = {v[0], v[1], v[2]};
    known.insert("/graph/degree");
  }
  if (in.has_dataset("/graph/edge_length")) {
    const auto v = read_vector(in, "/graph/edge_length", known);
    expect_size(in, "/graph/edge_length", v.size(), 5, "min, 5%, median, 95%, max");
    g.edge_length = {v[0], v[1], v[2], v[3], v[4]};
  }
  g.component_sizes = read_ids(in, "/graph/component_sizes", version);
  known.insert("/graph/component_sizes");
  if (in.has_dataset("/graph/dropped_rows")) {
    g.dropped_rows = read_ids(in, "/graph/dropped_rows", version);
    known.insert("/graph/dropped_rows");
  }
  g.bridges = read_bridges(in, version, known);
  return g;
}

void write_quality_group(H5Writer& out, const MapQualityRecord& q) {
  for (const MapScoreRecord& s : q.by_k) {
    const std::string base = "/quality/k" + std::to_string(s.k) + "/";
    const json common = {{"k", s.k},
                         {"method", s.method},
                         {"sample_size", s.sample_size},
                         {"interval_method", s.interval_method}};
    auto scalar = [&](const char* name, double v, const std::array<double, 2>& interval) {
      json at = common;
      at["interval_95"] = {interval[0], interval[1]};
      write_scalar(out, base + name, v, at);
    };
    scalar("trustworthiness", s.trustworthiness, s.trustworthiness_95);
    scalar("continuity", s.continuity, s.continuity_95);
    scalar("knn_preservation", s.knn_preservation, s.knn_preservation_95);
    write_vector(out, base + "scored_rows", s.scored_rows, "map row of each per-point term");
    write_vector(out, base + "trustworthiness_terms", s.trustworthiness_terms,
                 "each scored point's term of 1 - T(k)");
    write_vector(out, base + "continuity_terms", s.continuity_terms,
                 "each scored point's term of 1 - C(k)");
  }
  if (q.residual) {
    const auto& r = *q.residual;
    out.write("/quality/residual_variance", r.by_dims, {r.by_dims.size()});
    write_json_attributes(
        out, "/quality/residual_variance",
        {{"pairs", r.pairs},
         {"sampled", r.sampled},
         {"drawn", r.drawn},
         {"standard_error", r.standard_error},
         {"meaning", "1 - R^2 of given vs map distances using the first d axes"}});
  }
  if (q.dimension) {
    const auto& d = *q.dimension;
    write_scalar(out, "/quality/intrinsic_dimension", d.estimate,
                 {{"k", d.k},
                  {"method", d.method},
                  {"averaging", d.averaging},
                  {"points", d.points},
                  {"points_used", d.points_used}});
  }
  if (q.axis_share) {
    const auto& a = *q.axis_share;
    out.write("/quality/axis_share", a.share, {a.share.size()});
    write_json_attributes(
        out, "/quality/axis_share",
        {{"meaning",
          "eigenvalue of each axis / sum of the positive eigenvalues of the whole spectrum"},
         {"basis", a.basis},
         {"noise_axes", a.noise_axes},
         {"standard_error", a.standard_error}});
  }
  if (q.short_circuits) write_short_circuits(out, *q.short_circuits);
}

MapQualityRecord read_quality_group(const H5Reader& in, std::int64_t version, std::size_t n,
                                    std::set<std::string>& known) {
  MapQualityRecord q;
  if (!in.has_group("/quality")) return q;
  const std::regex score_path(R"(/quality/k([0-9]{1,9})/trustworthiness)");
  std::vector<std::int64_t> ks;
  std::smatch match;
  for (const std::string& name : in.datasets_under("/quality"))
    if (std::regex_match(name, match, score_path)) ks.push_back(std::stoll(match[1].str()));
  std::sort(ks.begin(), ks.end());
  for (std::int64_t k : ks) {
    MapScoreRecord s;
    const std::string base = "/quality/k" + std::to_string(k) + "/";
    auto scalar = [&](const char* name, double& value, std::array<double, 2>& interval) {
      const std::string path = base + name;
      if (!in.info(path).dims.empty()) bad(in, path, "is not a scalar");
      value = in.read<double>(path).at(0);
      const json at = read_json_attributes(in, path);
      const auto i = list_attribute<double>(in, path, at, "interval_95");
      if (i.size() != 2) bad(in, path, "interval_95 does not hold 2 values");
      interval = {i[0], i[1]};
      known.insert(path);
      return at;
    };
    const json at = scalar("trustworthiness", s.trustworthiness, s.trustworthiness_95);
    scalar("continuity", s.continuity, s.continuity_95);
    scalar("knn_preservation", s.knn_preservation, s.knn_preservation_95);
    const std::string t_path = base + "trustworthiness";
    s.k = attribute<std::int64_t>(in, t_path, at, "k");
    if (s.k != k) bad(in, t_path, "attribute k is " + std::to_string(s.k));
    s.method = attribute<std::string>(in, t_path, at, "method");
    s.sample_size = attribute<std::int64_t>(in, t_path, at, "sample_size");
    s.interval_method = attribute<std::string>(in, t_path, at, "interval_method");
    const std::string rows_path = base + "scored_rows";
    s.scored_rows = read_ids(in, rows_path, version);
    known.insert(rows_path);
    for (std::int64_t r : s.scored_rows)
      if (static_cast<std::size_t>(r) >= n)
        bad(in, rows_path,
            "row " + std::to_string(r) + " is not a map row (N = " + std::to_string(n) + ")");
    s.trustworthiness_terms = read_vector(in, base + "trustworthiness_terms", known);
    s.continuity_terms = read_vector(in, base + "continuity_terms", known);
    expect_size(in, base + "trustworthiness_terms", s.trustworthiness_terms.size(),
                s.scored_rows.size(), "one per scored row");
    expect_size(in, base + "continuity_terms", s.continuity_terms.size(), s.scored_rows.size(),
                "one per scored row");
    q.by_k.push_back(std::move(s));
  }
  if (const std::string path = "/quality/residual_variance"; in.has_dataset(path)) {
    MapResidualRecord r;
    r.by_dims = read_vector(in, path, known);
    const json at = read_json_attributes(in, path);
    r.standard_error = list_attribute<double>(in, path, at, "standard_error");
    r.pairs = attribute<std::int64_t>(in, path, at, "pairs");
    r.sampled = attribute<std::int64_t>(in, path, at, "sampled") != 0;
    r.drawn = attribute<std::string>(in, path, at, "drawn");
    q.residual = std::move(r);
  }
  if (const std::string path = "/quality/intrinsic_dimension"; in.has_dataset(path)) {
    if (!in.info(path).dims.empty()) bad(in, path, "is not a scalar");
    MapDimensionRecord d;
    d.estimate = in.read<double>(path).at(0);
    known.insert(path);
    const json at = read_json_attributes(in, path);
    d.k = attribute<std::int64_t>(in, path, at, "k");
    d.method = attribute<std::string>(in, path, at, "method");
    d.averaging = attribute<std::string>(in, path, at, "averaging");
    d.points = attribute<std::string>(in, path, at, "points");
    d.points_used = attribute<std::int64_t>(in, path, at, "points_used");
    q.dimension = std::move(d);
  }
  if (const std::string path = "/quality/axis_share"; in.has_dataset(path)) {
    MapAxisShareRecord a;
    a.share = read_vector(in, path, known);
    const json at = read_json_attributes(in, path);
    a.basis = attribute<std::string>(in, path, at, "basis");
    a.noise_axes = list_attribute<std::int64_t>(in, path, at, "noise_axes");
    a.standard_error = list_attribute<double>(in, path, at, "standard_error");
    q.axis_share = std::move(a);
  }
  q.short_circuits = read_short_circuits(in, known);
  return q;
}

void write_preprocess_group(H5Writer& out, const PreprocessModel& m) {
  const json attrs = {{"scale", scale_name(m.scale)},
                      {"metric", metric_name(m.metric)},
                      {"components", m.components},
                      {"variance_kept", m.variance_kept}};
  auto write = [&](const std::string& path, const std::vector<double>& v,
                   const std::vector<std::size_t>& dims) {
    out.write(path, v, dims);
    write_json_attributes(out, path, attrs);
  };
  write("/preprocess/centre", m.centre, {m.centre.size()});
  write("/preprocess/spread", m.spread, {m.spread.size()});
  if (m.components == 0) return;
  write("/preprocess/pca_mean", m.pca_mean, {m.pca_mean.size()});
  write("/preprocess/axes", m.axes, {m.components, m.input_cols});
  write("/preprocess/variances", m.variances, {m.variances.size()});
}

std::optional<PreprocessModel> read_preprocess_group(const H5Reader& in,
                                                     std::set<std::string>& known) {
  const std::string centre = "/preprocess/centre";
  if (!in.has_dataset(centre)) return std::nullopt;
  PreprocessModel m;
  m.centre = read_vector(in, centre, known);
  m.input_cols = m.centre.size();
  m.spread = read_vector(in, "/preprocess/spread", known);
  expect_size(in, "/preprocess/spread", m.spread.size(), m.input_cols, "one per input column");
  const json at = read_json_attributes(in, centre);
  const std::string scale = attribute<std::string>(in, centre, at, "scale");
  const std::string metric = attribute<std::string>(in, centre, at, "metric");
  bool scale_known = false, metric_known = false;
  for (Scale s : {Scale::none, Scale::standard, Scale::robust})
    if (scale == scale_name(s)) m.scale = s, scale_known = true;
  for (Metric s : {Metric::euclidean, Metric::cosine})
    if (metric == metric_name(s)) m.metric = s, metric_known = true;
  if (!scale_known) bad(in, centre, "unknown scale '" + scale + "'");
  if (!metric_known) bad(in, centre, "unknown metric '" + metric + "'");
  const std::int64_t components = attribute<std::int64_t>(in, centre, at, "components");
  if (components < 0 || static_cast<std::size_t>(components) > m.input_cols)
    bad(in, centre,
        "components is " + std::to_string(components) + " for " + std::to_string(m.input_cols) +
            " columns");
  m.components = static_cast<std::size_t>(components);
  m.variance_kept = attribute<double>(in, centre, at, "variance_kept");
  if (m.components == 0) return m;
  m.pca_mean = read_vector(in, "/preprocess/pca_mean", known);
  expect_size(in, "/preprocess/pca_mean", m.pca_mean.size(), m.input_cols, "one per input column");
  const auto dims = in.require_rank("/preprocess/axes", 2).dims;
  if (dims[0] != m.components || dims[1] != m.input_cols)
    bad(in, "/preprocess/axes", "is not components x columns");
  m.axes = in.read<double>("/preprocess/axes");
  known.insert("/preprocess/axes");
  m.variances = read_vector(in, "/preprocess/variances", known);
  expect_size(in, "/preprocess/variances", m.variances.size(), m.components, "one per component");
  return m;
}

void write_input_group(H5Writer& out, const MapInputRecord& input) {
  if (input.centres)
    write_vector(out, "/input/centres", *input.centres,
                 "per-column values subtracted from the input (in float64) before narrowing to "
                 "float32; later uses of the input subtract the same");
  write_vector(out, "/input/dropped_nonfinite_rows", input.dropped_nonfinite_rows,
               "input rows dropped for NaN or infinite values");
}

MapInputRecord read_input_group(const H5Reader& in, std::int64_t version,
                                std::set<std::string>& known) {
  MapInputRecord input;
  if (in.has_dataset("/input/centres")) input.centres = read_vector(in, "/input/centres", known);
  if (const std::string path = "/input/dropped_nonfinite_rows"; in.has_dataset(path)) {
    input.dropped_nonfinite_rows = read_ids(in, path, version);
    known.insert(path);
  }
  return input;
}

namespace {

const char* const kTriangulation = "/placement/triangulation";
const char* const kMeanSquared = "/placement/landmark_mean_squared";
const char* const kNearestRatio = "/placement/nearest_ratio";
const char* const kFarRows = "/placement/far_rows";

}  // namespace

void write_placement_group(H5Writer& out, const MapPlacementRecord& p) {
  if (p.triangulation) {
    const Triangulation& t = *p.triangulation;
    out.write(kTriangulation, t.p, {t.dims, t.landmarks});
    write_with_meaning(out, kTriangulation,
                       "landmark MDS triangulation: x = -1/2 P (delta^2 - mu), row k of P the "
                       "k-th eigenvector of the landmark Gram matrix over sqrt(eigenvalue)");
    write_vector(out, kMeanSquared, t.mean_squared,
                 "mu: each landmark's mean squared geodesic distance to the landmarks");
  }
  if (p.placed) {
    const MapPlacedRecord& r = *p.placed;
    const json why = {{"typical_distance", r.typical_distance}, {"far_ratio", r.far_ratio}};
    out.write(kNearestRatio, r.nearest_ratio, {r.nearest_ratio.size()});
    write_json_attributes(out, kNearestRatio, why);
    write_with_meaning(out, kNearestRatio,
                       "distance to the nearest reference point over the map's typical "
                       "neighbour distance");
    out.write(kFarRows, r.far_rows, {r.far_rows.size()});
    write_json_attributes(out, kFarRows, why);
    write_with_meaning(out, kFarRows, "input rows whose nearest_ratio exceeds far_ratio");
  }
}

std::optional<MapPlacementRecord> read_placement_group(const H5Reader& in, std::int64_t version,
                                                       std::size_t n, std::size_t m, std::size_t l,
                                                       std::set<std::string>& known) {
  MapPlacementRecord p;
  if (in.has_dataset(kTriangulation)) {
    const auto dims = in.require_rank(kTriangulation, 2).dims;
    if (dims[0] != m || dims[1] != l)
      bad(in, kTriangulation,
          "is " + std::to_string(dims[0]) + " x " + std::to_string(dims[1]) +
              ", expected m x L = " + std::to_string(m) + " x " + std::to_string(l));
    if (!in.has_dataset(kMeanSquared))
      bad(in, kMeanSquared, "missing (the triangulation needs it)");
    Triangulation t;
    t.dims = m;
    t.landmarks = l;
    t.p = in.read<double>(kTriangulation);
    known.insert(kTriangulation);
    t.mean_squared = read_vector(in, kMeanSquared, known);
    expect_size(in, kMeanSquared, t.mean_squared.size(), l, "one per landmark");
    p.triangulation = std::move(t);
  }
  if (in.has_dataset(kNearestRatio)) {
    MapPlacedRecord r;
    in.require_rank(kNearestRatio, 1);
    r.nearest_ratio = in.read<float>(kNearestRatio);
    known.insert(kNearestRatio);
    expect_size(in, kNearestRatio, r.nearest_ratio.size(), n, "one per map row");
    const json at = read_json_attributes(in, kNearestRatio);
    r.typical_distance = attribute<double>(in, kNearestRatio, at, "typical_distance");
    r.far_ratio = attribute<double>(in, kNearestRatio, at, "far_ratio");
    if (!in.has_dataset(kFarRows)) bad(in, kFarRows, "missing (with nearest_ratio)");
    r.far_rows = read_ids(in, kFarRows, version);
    known.insert(kFarRows);
    p.placed = std::move(r);
  }
  if (!p.triangulation && !p.placed) return std::nullopt;
  return p;
}

}  // namespace unfurl::io::detail
