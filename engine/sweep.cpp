#include "engine/sweep.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <limits>

#include "engine/embedding_steps.hpp"
#include "engine/error.hpp"
#include "engine/geodesic.hpp"
#include "engine/linear.hpp"
#include "engine/timer.hpp"

namespace unfurl {

std::string setting_name(const Neighbourhood& setting) {
  if (const auto* within = std::get_if<WithinRadius>(&setting)) {
    char text[48];
    std::snprintf(text, sizeof text, "radius %g", within->radius);
    return text;
  }
  return "k " + std::to_string(std::get<NearestK>(setting).k);
}

double setting_value(const Neighbourhood& setting) {
  if (const auto* within = std::get_if<WithinRadius>(&setting)) return within->radius;
  return static_cast<double>(std::get<NearestK>(setting).k);
}

namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

std::string number(double v, int digits = 3) {
  char text[48];
  std::snprintf(text, sizeof text, "%.*f", digits, v);
  return text;
}

const char* settings_field(const std::vector<Neighbourhood>& settings) {
  return !settings.empty() && std::holds_alternative<WithinRadius>(settings.front())
             ? "WithinRadius.radius"
             : "NearestK.k";
}

// The first m columns of `coords`.
PointSet leading_axes(const PointSet& coords, std::size_t m) {
  m = std::min(m, coords.cols);
  if (m == coords.cols) return coords;
  PointSet out(coords.rows, m);
  for (std::size_t r = 0; r < coords.rows; ++r) std::copy_n(coords.row(r), m, out.row(r));
  return out;
}

void append_warnings(std::vector<std::string>& to, const char* stage,
                     const std::vector<std::string>& from) {
  for (const auto& w : from) to.push_back(std::string(stage) + ": " + w);
}

// T, C and kNN preservation of `map` (rows: the input rows `rows` of `points`) at the one
// evaluation k; NaN when the map has too few points for that k.
void score_map(const PointSet& points, std::span<const std::size_t> rows, const PointSet& map,
               const SweepOptions& o, SweepRow& row, StopToken stop) {
  row.score.k = o.scores.ks.front();
  row.score.trustworthiness = row.score.continuity = row.score.knn_preservation = kNaN;
  row.score.t_low = row.score.t_high = row.score.c_low = row.score.c_high = kNaN;
  row.score.knn_low = row.score.knn_high = kNaN;
  if (2 * row.score.k >= map.rows) {
    row.warnings.push_back("scores: " + std::to_string(map.rows) + " points in the map, too few " +
                           "for T(" + std::to_string(row.score.k) + ") (k < N/2)");
    return;
  }
  const std::vector<NodeId> picked(rows.begin(), rows.end());
  const PointSet input =
      rows.size() == points.rows ? points : gather_rows(points, Numbering(picked, points.rows));
  NeighbourhoodScores scores = neighbourhood_scores(input, map, o.scores, stop);
  append_warnings(row.warnings, "scores", scores.warnings);
  row.score = std::move(scores.by_k.front());
  row.score.scored_points = {};
  row.score.t_terms = row.score.c_terms = row.score.knn_terms = {};
}

// The map of one setting through the embedding's steps; `shared` holds the landmarks (graph
// nodes) of the largest embedded setting, empty until one was picked.
void embed_setting(const PointSet& points, NodeGraph nodes, const SweepOptions& o,
                   std::vector<NodeId>& shared, SweepRow& row, StopToken stop) {
  // Short circuits on the graph as built, as embed checks them (engine/short_circuit.hpp).
  ShortCircuitResult circuits = find_short_circuits(nodes.graph, o.suspects, stop);
  append_warnings(row.warnings, "short circuits", circuits.summary.warnings);
  row.suspects = circuits.summary.suspects;
  for (const ShortCircuitEdge& e : circuits.worst)
    row.suspect_rows.emplace_back(nodes.point_of_node[e.from], nodes.point_of_node[e.to]);
  const ComponentLabels labels = connected_components(nodes.graph);
  row.components = labels.count;
  row.largest_component =
      labels.size.empty() ? 0 : *std::max_element(labels.size.begin(), labels.size.end());
  if (labels.count > 1 && o.components.policy == ComponentPolicy::fail) {
    row.skipped = "disconnected: " + std::to_string(labels.count) + " components, the largest " +
                  std::to_string(row.largest_component) + " of " + std::to_string(row.nodes) +
                  " nodes";
    return;
  }
  ComponentResult connected = make_connected(nodes.graph, o.components, nodes.node_points, stop);
  append_warnings(row.warnings, "components", connected.summary.warnings);
  OrderedGraph ordered = order_nodes(connected, nodes.node_points, {o.order});
  nodes.graph = NeighbourGraph{};  // after the order: a connected graph is not copied
  connected.graph = NeighbourGraph{};
  const Renumbering& order = ordered.numbering;
  const std::size_t n = ordered.graph.nodes();
  const std::size_t dims = o.dims_high;
  const bool exact = std::holds_alternative<AllLandmarks>(o.landmarks.count);

  SourceRowsOptions so{o.landmarks};
  if (!exact) {
    const std::size_t count = o.landmarks.resolved_count(n, dims);
    if (count < dims + 1 || count > n) {
      row.skipped = "too few nodes in the kept component (" + std::to_string(n) + ") for " +
                    std::to_string(count) + " landmarks and " + std::to_string(dims) + " axes";
      return;
    }
    so.landmarks.count = LandmarkCount{count};
  }
  // The shared landmarks, as ordered nodes of this graph, when all of them are in it.
  const Numbering connected_of_node = connected.old_of_new.inverse();
  std::vector<NodeId> given;
  bool use_shared = !exact && !shared.empty();
  for (std::size_t i = 0; use_shared && i < shared.size(); ++i) {
    use_shared = connected_of_node.has(shared[i]);
    if (use_shared) given.push_back(order.new_of_old[connected_of_node[shared[i]]]);
  }
  SourceRows sources;
  bool picked_here = false;
  if (use_shared) {
    GeodesicOptions go;
    go.sources = std::span<const NodeId>(given);
    GeodesicResult rows = geodesic_rows(ordered.graph, go, stop);
    sources.rows = std::move(rows.rows);
    sources.summary.landmarks = given.size();
    sources.summary.nodes = n;
    sources.summary.pick = o.landmarks.pick;
    sources.summary.seconds = rows.summary.seconds;
    sources.summary.threads = rows.summary.threads;
  } else {
    sources = source_rows(ordered.graph, order.new_of_old.values(), so, stop);
    append_warnings(row.warnings, "landmarks", sources.summary.warnings);
    picked_here = !exact && shared.empty();
    if (picked_here)
      for (NodeId v : sources.rows.sources)
        shared.push_back(connected.old_of_new[order.old_of_new[v]]);
  }
  row.shared_landmarks = use_shared || picked_here;
  row.landmarks = sources.rows.rows;

  SpectralOptions spectral = o.spectral;
  spectral.dims = dims;
  SpectralResult map = map_nodes(sources, spectral, stop);
  append_warnings(row.warnings, "spectral", map.summary.warnings);
  row.negative_ratio = map.negative_ratio;
  row.negative_ratio_error = map.mass.ratio_error();
  // Residual variance over the pairs of every node with the landmarks: no more geodesics
  // than the map needed, and the same source nodes in every setting that shares them.
  const ResidualVarianceCurve rv = residual_variance(sources.rows, map.coords, stop);
  append_warnings(row.warnings, "residual variance", rv.warnings);
  const std::vector<NodeId> landmark_nodes = sources.rows.sources;
  sources.rows = DistanceRows{};
  row.residual = rv.by_dims;
  row.residual_error = rv.standard_error;
  row.residual_error.resize(row.residual.size(), 0.0);
  row.residual_basis = "geodesics from the landmarks";

  const Numbering ordered_of_point =
      nodes.node_of_point.then(connected_of_node).then(order.new_of_old);
  const Numbering point_of_ordered =
      order.old_of_new.then(connected.old_of_new).then(nodes.point_of_node);
  DistanceRows none;
  none.cols = n;
  InputMap back =
      map_to_input(map.coords, std::move(none), landmark_nodes, ordered_of_point, point_of_ordered);
  row.map_points = back.rows.size();
  row.dropped_points = back.dropped.size();
  score_map(points, back.rows, leading_axes(back.coords, o.score_dims), o, row, stop);
  row.map = leading_axes(back.coords, 2);
  row.map_rows = std::move(back.rows);
  row.embedded = true;
}

// The linear baseline: PCA of the points, scored the same way; its residual variance is
// against straight-line input distances (sampled pairs), as it has no graph.
SweepRow linear_row(const PointSet& points, const SweepOptions& o, StopToken stop) {
  SweepRow row;
  row.linear = true;
  row.nodes = points.rows;
  LinearOptions lo;
  lo.dims = std::min(o.dims_high, points.cols);
  LinearResult lin = linear_map(points, lo, stop);
  PairSampleOptions pairs_options;
  pairs_options.seed = o.landmarks.seed;
  const auto pairs = sample_pair_distances(points, pairs_options);
  const ResidualVarianceCurve rv = residual_variance(pairs, lin.coords, stop);
  row.residual.assign(o.dims_high, kNaN);
  row.residual_error.assign(o.dims_high, kNaN);
  for (std::size_t d = 0; d < rv.by_dims.size() && d < o.dims_high; ++d) {
    row.residual[d] = rv.by_dims[d];
    row.residual_error[d] = d < rv.standard_error.size() ? rv.standard_error[d] : 0.0;
  }
  row.residual_basis = "input distances";
  std::vector<std::size_t> all(points.rows);
  for (std::size_t i = 0; i < all.size(); ++i) all[i] = i;
  score_map(points, all, leading_axes(lin.coords, o.score_dims), o, row, stop);
  if (lo.dims < o.score_dims)
    row.warnings.push_back("the input has " + std::to_string(points.cols) +
                           " columns: PCA scored on " + std::to_string(lo.dims) + " axes");
  row.map_points = points.rows;
  row.map = leading_axes(lin.coords, 2);
  row.map_rows = std::move(all);
  row.embedded = true;
  return row;
}

void flag_rows(std::vector<SweepRow>& rows, const SweepOptions& o) {
  const std::size_t d = o.score_dims - 1;
  const SweepRow* previous = nullptr;
  for (SweepRow& row : rows) {
    if (!row.embedded) continue;
    if (previous) {
      const double before = previous->residual[d], now = row.residual[d];
      if (now - before > o.jump_rise)
        row.flags.push_back("residual variance jump: " + number(before) + " to " + number(now) +
                            " at " + std::to_string(o.score_dims) + " dims after " +
                            setting_name(previous->setting));
      const NeighbourhoodScore &a = previous->score, &b = row.score;
      if (a.trustworthiness - b.trustworthiness > o.trust_drop && b.t_high < a.t_low)
        row.flags.push_back("trustworthiness drop: " + number(a.trustworthiness, 4) + " to " +
                            number(b.trustworthiness, 4) + " after " +
                            setting_name(previous->setting));
    }
    previous = &row;
  }
}

// Why no setting could be embedded, in words, with what to change.
std::string none_usable(const std::vector<SweepRow>& rows, const SweepOptions& o) {
  const bool all_disconnected = std::all_of(rows.begin(), rows.end(), [](const SweepRow& r) {
    return r.skipped.rfind("disconnected", 0) == 0;
  });
  if (all_disconnected)
    return "no usable setting: every graph is disconnected (" + setting_name(rows.front().setting) +
           ": " + std::to_string(rows.front().components) + " components, " +
           setting_name(rows.back().setting) + ": " + std::to_string(rows.back().components) +
           "); sweep larger " + settings_field(o.settings) +
           " values, or set ComponentOptions.policy to largest to map the largest component";
  return "no usable setting: none could be embedded (" + setting_name(rows.back().setting) + ": " +
         rows.back().skipped + ")";
}

void recommend(SweepResult& result, const SweepOptions& o) {
  const auto& rows = result.rows;
  std::size_t first_flag = rows.size();
  for (std::size_t i = 0; i < rows.size() && first_flag == rows.size(); ++i)
    if (!rows[i].flags.empty()) first_flag = i;
  const auto scored = [&](std::size_t i) {
    return rows[i].embedded && std::isfinite(rows[i].score.trustworthiness);
  };
  result.usable =
      std::any_of(rows.begin(), rows.end(), [](const SweepRow& r) { return r.embedded; });
  if (!result.usable) {
    result.recommendation = none_usable(rows, o);
    return;
  }
  const std::string t_name = "T(" + std::to_string(o.scores.ks.front()) + ")";
  std::vector<std::size_t> clean;
  for (std::size_t i = 0; i < first_flag; ++i)
    if (scored(i) && rows[i].components == 1 && rows[i].suspects.value_or(0) == 0)
      clean.push_back(i);
  if (!clean.empty()) {
    std::size_t best = clean.front();
    for (std::size_t i : clean)
      if (rows[i].score.trustworthiness > rows[best].score.trustworthiness) best = i;
    const double floor = rows[best].score.trustworthiness - o.near_best;
    const std::size_t pick = *std::find_if(clean.begin(), clean.end(), [&](std::size_t i) {
      return rows[i].score.trustworthiness >= floor;
    });
    const bool checked = rows[pick].suspects.has_value();
    std::string why = setting_name(rows[pick].setting) +
                      ": the smallest setting whose graph is connected" +
                      (checked ? ", without short-circuit suspects" : "");
    if (first_flag < rows.size())
      why += ", below the first flagged setting (" + setting_name(rows[first_flag].setting) + ")";
    why += ", with " + t_name + " = " + number(rows[pick].score.trustworthiness, 4);
    why += pick == best ? ", the best of these"
                        : " within " + number(o.near_best, 3) + " of the best (" +
                              number(rows[best].score.trustworthiness, 4) + " at " +
                              setting_name(rows[best].setting) + ")";
    if (!checked) why += "; short-circuit suspects were not checked";
    result.recommended = pick;
    result.recommendation = why;
    return;
  }
  std::optional<std::size_t> best;
  for (std::size_t i = 0; i < rows.size(); ++i)
    if (scored(i) && (!best || rows[i].score.trustworthiness > rows[*best].score.trustworthiness))
      best = i;
  if (!best) {
    result.recommendation = "no setting could be scored at " + t_name + "; none is recommended";
    return;
  }
  result.recommended = best;
  const SweepRow& r = rows[*best];
  std::string caveat;
  if (r.components > 1)
    caveat = "its graph has " + std::to_string(r.components) + " components (" +
             std::to_string(r.dropped_points) + " points left out or bridged)";
  else if (r.suspects.value_or(0) > 0)
    caveat = "it has " + std::to_string(*r.suspects) + " short-circuit suspects";
  else
    caveat = "it lies at or above the first flagged setting (" +
             setting_name(rows[first_flag].setting) + ")";
  result.recommendation = setting_name(r.setting) + ": the best " + t_name + " (" +
                          number(r.score.trustworthiness, 4) +
                          ") among the settings that could be embedded, a weak choice: " + caveat +
                          "; no setting was connected, free of suspects and below every flag";
}

}  // namespace

void SweepOptions::validate(std::size_t points) const {
  const char* field = settings_field(settings);
  if (settings.empty()) throw OptionError(field, "no setting to sweep");
  if (settings.size() > max_settings)
    throw OptionError(field, std::to_string(settings.size()) + " settings; at most " +
                                 std::to_string(max_settings));
  for (std::size_t i = 0; i < settings.size(); ++i) {
    if (settings[i].index() != settings.front().index())
      throw OptionError(field, "the settings mix k and radius");
    if (i > 0 && !(setting_value(settings[i]) > setting_value(settings[i - 1])))
      throw OptionError(
          field, "the settings must ascend without repeats: " + setting_name(settings[i - 1]) +
                     " then " + setting_name(settings[i]));
  }
  GraphOptions g = graph;
  g.neighbourhood = settings.front();
  g.validate(points);
  g.neighbourhood = settings.back();
  g.validate(points);
  components.validate();
  if (dims_low < 1) throw OptionError("SweepOptions.dims_low", "must be at least 1, got 0");
  if (dims_high < dims_low)
    throw OptionError("SweepOptions.dims_high", "must be at least the low end " +
                                                    std::to_string(dims_low) + ", got " +
                                                    std::to_string(dims_high));
  if (score_dims < 1 || score_dims > dims_high)
    throw OptionError("SweepOptions.score_dims", "must be from 1 to " + std::to_string(dims_high) +
                                                     ", got " + std::to_string(score_dims));
  if (scores.ks.size() != 1)
    throw OptionError("QualityOptions.ks",
                      "the sweep evaluates one k, got " + std::to_string(scores.ks.size()));
  scores.validate(points);
  const bool exact = std::holds_alternative<AllLandmarks>(landmarks.count);
  const std::size_t order = exact ? points : landmarks.resolved_count(points, dims_high);
  if (!exact) {
    landmarks.validate(points);
    if (order < dims_high + 1)
      throw OptionError("LandmarkOptions.count",
                        "must be at least " + std::to_string(dims_high + 1) + " for maps of " +
                            std::to_string(dims_high) + " axes, got " + std::to_string(order));
  }
  suspects.validate();
  SpectralOptions s = spectral;
  s.dims = dims_high;
  s.validate(order);
  for (const auto& [name, value] : {std::pair{"SweepOptions.jump_rise", jump_rise},
                                    std::pair{"SweepOptions.trust_drop", trust_drop},
                                    std::pair{"SweepOptions.near_best", near_best}})
    if (!(value >= 0.0) || !std::isfinite(value))
      throw OptionError(name, "must be a finite number of 0 or more, got " + std::to_string(value));
}

SweepResult sweep_neighbourhoods(const PointSet& points, const SweepOptions& o, StopToken stop) {
  const Stopwatch total;
  o.validate(points.rows);
  SweepResult result;
  result.points = points.rows;
  result.score_k = o.scores.ks.front();
  GraphOptions largest = o.graph;
  largest.neighbourhood = o.settings.back();
  const NeighbourSearch search = search_neighbours(points, largest, stop);
  result.search_seconds = search.seconds();
  result.nodes = search.nodes();
  result.rows.resize(o.settings.size());
  std::vector<NodeId> shared;
  // Largest first: its kept component is where the shared landmarks are picked.
  for (std::size_t i = o.settings.size(); i-- > 0;) {
    const Stopwatch watch;
    SweepRow& row = result.rows[i];
    row.setting = o.settings[i];
    GraphResult built = graph_from_search(search, row.setting, stop);
    row.nodes = built.summary.nodes;
    row.edges = built.summary.undirected_edges;
    row.isolated_nodes = built.summary.isolated_nodes;
    append_warnings(row.warnings, "graph", built.summary.warnings);
    try {
      embed_setting(points, node_graph(points, std::move(built)), o, shared, row, stop);
    } catch (const DataError& e) {
      row.embedded = false;
      row.skipped = e.what();
    }
    row.seconds = watch.seconds();
  }
  if (o.linear_baseline) result.linear = linear_row(points, o, stop);
  flag_rows(result.rows, o);
  recommend(result, o);
  result.seconds = total.seconds();
  return result;
}

}  // namespace unfurl
