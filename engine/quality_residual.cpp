#include "engine/quality_residual.hpp"

#include <algorithm>
#include <chrono>
#include <cmath>

#include "engine/detail/point_checks.hpp"
#include "engine/detail/sampling.hpp"
#include "engine/error.hpp"
#include "engine/geodesic.hpp"
#include "engine/parallel.hpp"
#include "engine/random.hpp"

namespace unfurl {
namespace {

// Means and centred co-moments of (x, y_1..y_m) over a group of pairs, combined group by group
// with the pairwise update of Chan, Golub and LeVeque (1979) so no sum cancels.
struct Moments {
  double n = 0, mean_x = 0, sxx = 0;
  std::vector<double> mean_y, syy, sxy;
  explicit Moments(std::size_t m) : mean_y(m, 0.0), syy(m, 0.0), sxy(m, 0.0) {}

  void merge(const Moments& o) {
    if (o.n == 0) return;
    const double total = n + o.n;
    const double f = n * o.n / total;
    const double dx = o.mean_x - mean_x;
    for (std::size_t d = 0; d < mean_y.size(); ++d) {
      const double dy = o.mean_y[d] - mean_y[d];
      syy[d] += o.syy[d] + dy * dy * f;
      sxy[d] += o.sxy[d] + dx * dy * f;
      mean_y[d] += dy * o.n / total;
    }
    sxx += o.sxx + dx * dx * f;
    mean_x += dx * o.n / total;
    n = total;
  }
};

// Distances between map rows a and b using the first 1..m axes.
void map_distances(const PointSet& map, std::size_t a, std::size_t b, double* out) {
  const float* p = map.row(a);
  const float* q = map.row(b);
  double s = 0;
  for (std::size_t c = 0; c < map.cols; ++c) {
    const double t = static_cast<double>(p[c]) - q[c];
    s += t * t;
    out[c] = std::sqrt(s);
  }
}

// Two passes over one group of pairs: means, then centred sums. pair(i, a, b, x) gives pair i.
template <class Pair>
Moments group_moments(const PointSet& map, std::size_t count, Pair pair) {
  const std::size_t m = map.cols;
  Moments g(m);
  std::vector<double> y(m);
  std::size_t a, b;
  double x;
  std::size_t used = 0;
  for (std::size_t i = 0; i < count; ++i) {
    if (!pair(i, a, b, x)) continue;
    map_distances(map, a, b, y.data());
    g.mean_x += x;
    for (std::size_t d = 0; d < m; ++d) g.mean_y[d] += y[d];
    ++used;
  }
  if (used == 0) return g;
  g.n = static_cast<double>(used);
  g.mean_x /= g.n;
  for (double& v : g.mean_y) v /= g.n;
  for (std::size_t i = 0; i < count; ++i) {
    if (!pair(i, a, b, x)) continue;
    map_distances(map, a, b, y.data());
    const double cx = x - g.mean_x;
    g.sxx += cx * cx;
    for (std::size_t d = 0; d < m; ++d) {
      const double cy = y[d] - g.mean_y[d];
      g.syy[d] += cy * cy;
      g.sxy[d] += cx * cy;
    }
  }
  return g;
}

ResidualVarianceCurve finish(const Moments& total, std::size_t m) {
  ResidualVarianceCurve curve;
  curve.pairs = static_cast<std::size_t>(total.n);
  if (total.n < 2) throw DataError("residual variance: fewer than 2 point pairs to correlate");
  if (!(total.sxx > 0))
    throw DataError("residual variance: every given distance is equal; R is undefined");
  for (std::size_t d = 0; d < m; ++d) {
    if (!(total.syy[d] > 0)) {
      curve.by_dims.push_back(1.0);
      curve.warnings.push_back("residual variance: the first " + std::to_string(d + 1) +
                               " map axes put every pair at the same distance; taken as 1");
      continue;
    }
    const double r = total.sxy[d] / std::sqrt(total.sxx * total.syy[d]);
    curve.by_dims.push_back(std::clamp(1.0 - r * r, 0.0, 1.0));
  }
  return curve;
}

}  // namespace

namespace {

// Lanes of one row's running sums: the pairs of a stretch of the row go to the lanes in turn,
// so the sums are a fixed function of the row (any thread count) and the lanes' chains of
// additions run side by side.
constexpr std::size_t kLanes = 4;

// One row's pairs (s, j), j != s, over a map of M axes in one pass: the sums of x - kx and
// y_d - ky_d, shifted by the row's first pair (x its geodesic, y_d its map distances), give
// the centred sums without the cancellation of raw sums: the shift is a value of the row, so
// it is within the row's range of its mean (shifted data, Chan, Golub and LeVeque, The
// American Statistician 37, 1983). Returns false when a geodesic value is not finite.
template <std::size_t M>
bool row_moments(const float* g, std::size_t n, std::size_t s, const float* map, Moments& out) {
  const float* p = map + s * M;
  const auto distances = [&](std::size_t j, double* y) {
    const float* q = map + j * M;
    double sum = 0;
    for (std::size_t c = 0; c < M; ++c) {
      const double t = static_cast<double>(p[c]) - q[c];
      sum += t * t;
      y[c] = std::sqrt(sum);
    }
  };
  const std::size_t j0 = s == 0 ? 1 : 0;
  const double kx = g[j0];
  double ky[M];
  distances(j0, ky);
  double su[kLanes] = {}, suu[kLanes] = {}, sv[M][kLanes] = {}, svv[M][kLanes] = {},
         suv[M][kLanes] = {};
  const auto add = [&](std::size_t j, std::size_t lane) {
    double y[M];
    distances(j, y);
    const double u = g[j] - kx;
    su[lane] += u;
    suu[lane] += u * u;
    for (std::size_t c = 0; c < M; ++c) {
      const double v = y[c] - ky[c];
      sv[c][lane] += v;
      svv[c][lane] += v * v;
      suv[c][lane] += u * v;
    }
  };
  const auto span = [&](std::size_t from, std::size_t to) {
    std::size_t j = from;
    for (; j + kLanes <= to; j += kLanes)
      for (std::size_t lane = 0; lane < kLanes; ++lane) add(j + lane, lane);
    for (std::size_t lane = 0; j < to; ++j, ++lane) add(j, lane);
  };
  span(0, s);
  span(s + 1, n);
  const auto total = [](const double* lanes) {
    return (lanes[0] + lanes[1]) + (lanes[2] + lanes[3]);
  };
  const double count = static_cast<double>(n - 1);
  const double tu = total(su);
  // An Inf or NaN anywhere in the row leaves the sums so (no finite float overflows them).
  if (!std::isfinite(tu) || !std::isfinite(total(suu)) || !std::isfinite(g[s])) return false;
  out.n = count;
  out.mean_x = kx + tu / count;
  out.sxx = std::max(0.0, total(suu) - tu * tu / count);
  for (std::size_t c = 0; c < M; ++c) {
    const double tv = total(sv[c]);
    out.mean_y[c] = ky[c] + tv / count;
    out.syy[c] = std::max(0.0, total(svv[c]) - tv * tv / count);
    out.sxy[c] = total(suv[c]) - tu * tv / count;
  }
  return true;
}

// Moments of one row's pairs: the one-pass sums for up to 4 map axes, else two passes.
Moments row_pair_moments(const float* g, std::size_t n, std::size_t s, const PointSet& map,
                         std::size_t r) {
  Moments out(map.cols);
  bool finite = true;
  switch (map.cols) {
    case 1:
      finite = row_moments<1>(g, n, s, map.values.data(), out);
      break;
    case 2:
      finite = row_moments<2>(g, n, s, map.values.data(), out);
      break;
    case 3:
      finite = row_moments<3>(g, n, s, map.values.data(), out);
      break;
    case 4:
      finite = row_moments<4>(g, n, s, map.values.data(), out);
      break;
    default:
      detail::require_finite({g, n}, n, "residual variance: geodesic", r);
      return group_moments(map, n, [&](std::size_t j, std::size_t& a, std::size_t& b, double& x) {
        a = s;
        b = j;
        x = g[j];
        return j != s;
      });
  }
  if (!finite) detail::require_finite({g, n}, n, "residual variance: geodesic", r);
  return out;
}

// Moments of each row's pairs (sources[r], j), j != sources[r], appended in row order.
void append_row_moments(const DistanceRows& geodesic, const PointSet& map,
                        std::vector<Moments>& out, StopToken stop) {
  if (geodesic.cols != map.rows)
    throw DataError("residual variance: geodesic rows have " + std::to_string(geodesic.cols) +
                    " columns but the map has " + std::to_string(map.rows) + " rows");
  if (geodesic.rows == 0 || geodesic.sources.size() != geodesic.rows ||
      geodesic.values.size() != geodesic.rows * geodesic.cols)
    throw DataError("residual variance: geodesic rows are empty or inconsistent in size");
  if (geodesic.cols < 2)
    throw DataError("residual variance: fewer than 2 point pairs to correlate");
  const std::size_t m = map.cols;
  const std::size_t first = out.size();
  out.resize(first + geodesic.rows, Moments(m));
  ExceptionCollector errors;
#pragma omp parallel for schedule(dynamic)
  for (std::size_t r = 0; r < geodesic.rows; ++r) {
    errors.run([&] {
      if (errors.failed()) return;
      stop.check("residual variance");
      const std::size_t s = geodesic.sources[r];
      if (s >= geodesic.cols)
        throw DataError("residual variance: geodesic row " + std::to_string(r) + " has source " +
                        std::to_string(s) + ", not a map row");
      out[first + r] = row_pair_moments(geodesic.row(r), geodesic.cols, s, map, r);
    });
  }
  errors.rethrow();
}

Moments merged(const std::vector<Moments>& parts, std::size_t m, std::size_t skip_first = 0,
               std::size_t skip_last = 0) {
  Moments total(m);
  for (std::size_t i = 0; i < parts.size(); ++i)
    if (i < skip_first || i >= skip_last) total.merge(parts[i]);
  return total;
}

// Delete-a-group jackknife (Efron and Tibshirani, An Introduction to the Bootstrap, 1993,
// ch. 11) over up to 32 contiguous groups of source rows: the rows are the sampled units.
std::vector<double> jackknife_error(const std::vector<Moments>& rows, std::size_t m) {
  const std::size_t groups = std::min<std::size_t>(rows.size(), 32);
  std::vector<double> error(m, 0.0);
  if (groups < 2) return error;
  std::vector<std::vector<double>> leave_out;
  for (std::size_t g = 0; g < groups; ++g) {
    const Moments t = merged(rows, m, g * rows.size() / groups, (g + 1) * rows.size() / groups);
    leave_out.push_back(finish(t, m).by_dims);
  }
  for (std::size_t d = 0; d < m; ++d) {
    double mean = 0.0, sum = 0.0;
    for (const auto& v : leave_out) mean += v[d] / static_cast<double>(groups);
    for (const auto& v : leave_out) sum += (v[d] - mean) * (v[d] - mean);
    error[d] = std::sqrt(sum * static_cast<double>(groups - 1) / static_cast<double>(groups));
  }
  return error;
}

}  // namespace

ResidualVarianceCurve residual_variance(const DistanceRows& geodesic, const PointSet& map,
                                        StopToken stop) {
  const auto start = std::chrono::steady_clock::now();
  detail::require_points(map, "residual variance map");
  std::vector<Moments> rows;
  append_row_moments(geodesic, map, rows, stop);
  ResidualVarianceCurve curve = finish(merged(rows, map.cols), map.cols);
  curve.drawn = "every source-to-point pair of " + std::to_string(geodesic.rows) +
                " given geodesic rows (the landmarks' rows of a map file)";
  curve.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  return curve;
}

void ResidualOptions::validate() const {
  if (sources < 1) throw OptionError("ResidualOptions.sources", "must be at least 1, got 0");
  if (min_sources < 1)
    throw OptionError("ResidualOptions.min_sources", "must be at least 1, got 0");
}

std::size_t ResidualOptions::source_count(std::size_t nodes) const {
  const std::size_t within_budget = nodes > 0 ? pair_budget / nodes : sources;
  return std::min(sources, std::max(min_sources, within_budget));
}

std::vector<NodeId> residual_sources(std::size_t nodes, const ResidualOptions& options,
                                     std::span<const NodeId> draw_order, std::string& drawn) {
  std::vector<NodeId> sources;
  const std::size_t count = options.source_count(nodes);
  if (nodes <= options.all_pairs_limit || count >= nodes) {
    for (std::size_t v = 0; v < nodes; ++v) sources.push_back(static_cast<NodeId>(v));
    drawn = "every pair of the " + std::to_string(nodes) + " graph nodes (all pairs up to " +
            std::to_string(options.all_pairs_limit) + " nodes)";
    return sources;
  }
  // Salted: with the same seed a random landmark draw of the same count would otherwise pick
  // the very same nodes, and the residual variance would read the landmark rows again.
  constexpr std::uint64_t kSalt = 0x7265736964756531;
  for (std::uint32_t at : detail::sample_rows(nodes, count, options.seed ^ kSalt))
    sources.push_back(draw_order.empty() ? static_cast<NodeId>(at) : draw_order[at]);
  drawn = "every graph node paired with " + std::to_string(count) +
          " source nodes drawn uniformly at random (seed " + std::to_string(options.seed) +
          ", not the landmarks; all pairs only up to " + std::to_string(options.all_pairs_limit) +
          " nodes)";
  return sources;
}

std::span<const NodeId> ResidualPlan::batch(std::size_t b) const {
  const std::size_t first = b * kBatch;
  return {sources.data() + first, std::min(kBatch, sources.size() - first)};
}

ResidualPlan plan_residual(std::size_t nodes, const ResidualOptions& options,
                           std::span<const NodeId> draw_order) {
  options.validate();
  ResidualPlan plan;
  plan.sources = residual_sources(nodes, options, draw_order, plan.drawn);
  plan.sampled = plan.sources.size() < nodes;
  return plan;
}

DistanceRows residual_rows(const NeighbourGraph& graph, const ResidualPlan& plan, std::size_t b,
                           StopToken stop) {
  return geodesic_rows(graph, {plan.batch(b)}, stop).rows;
}

ResidualVarianceCurve correlate_residual(const ResidualPlan& plan, const PointSet& coords,
                                         const std::function<DistanceRows(std::size_t)>& rows_of,
                                         StopToken stop) {
  const auto start = std::chrono::steady_clock::now();
  detail::require_points(coords, "residual variance map");
  // The per-row moments are merged in row order, so neither the batch size nor where a
  // batch came from changes the result.
  std::vector<Moments> rows;
  for (std::size_t b = 0; b < plan.batches(); ++b) {
    const DistanceRows batch = rows_of(b);
    const std::span<const NodeId> want = plan.batch(b);
    if (batch.cols != coords.rows || batch.rows != want.size() ||
        !std::equal(want.begin(), want.end(), batch.sources.begin(), batch.sources.end()))
      throw InternalError("residual variance: rows of batch " + std::to_string(b) +
                          " are not the planned ones");
    append_row_moments(batch, coords, rows, stop);
  }
  ResidualVarianceCurve curve = finish(merged(rows, coords.cols), coords.cols);
  curve.sampled = plan.sampled;
  curve.drawn = plan.drawn;
  if (curve.sampled) curve.standard_error = jackknife_error(rows, coords.cols);
  curve.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  return curve;
}

ResidualVarianceCurve graph_residual_variance(const NeighbourGraph& graph, const PointSet& coords,
                                              const ResidualOptions& options,
                                              std::span<const NodeId> draw_order, StopToken stop) {
  const auto start = std::chrono::steady_clock::now();
  const ResidualPlan plan = plan_residual(graph.nodes(), options, draw_order);
  detail::require_points(coords, "residual variance map");
  if (coords.rows != graph.nodes())
    throw InternalError("residual variance: a map of " + std::to_string(coords.rows) +
                        " rows for a graph of " + std::to_string(graph.nodes()) + " nodes");
  ResidualVarianceCurve curve = correlate_residual(
      plan, coords, [&](std::size_t b) { return residual_rows(graph, plan, b, stop); }, stop);
  curve.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  return curve;
}

ResidualVarianceCurve residual_variance(std::span<const PairDistance> pairs, const PointSet& map,
                                        StopToken stop) {
  const auto start = std::chrono::steady_clock::now();
  detail::require_points(map, "residual variance map");
  for (std::size_t i = 0; i < pairs.size(); ++i) {
    const PairDistance& p = pairs[i];
    if (p.a >= map.rows || p.b >= map.rows || p.a == p.b || !std::isfinite(p.distance))
      throw DataError("residual variance: pair " + std::to_string(i) +
                      " names rows outside the map, the same row twice or a non-finite distance");
  }
  // Fixed groups, so the sums (and the result) do not depend on the thread count.
  const std::size_t group = 65536;
  const std::size_t groups = (pairs.size() + group - 1) / group;
  const std::size_t m = map.cols;
  std::vector<Moments> parts(groups, Moments(m));
  ExceptionCollector errors;
#pragma omp parallel for schedule(dynamic)
  for (std::size_t g = 0; g < groups; ++g) {
    errors.run([&] {
      if (errors.failed()) return;
      stop.check("residual variance");
      const std::size_t first = g * group;
      const std::size_t count = std::min(group, pairs.size() - first);
      parts[g] =
          group_moments(map, count, [&](std::size_t i, std::size_t& a, std::size_t& b, double& x) {
            const PairDistance& p = pairs[first + i];
            a = p.a;
            b = p.b;
            x = p.distance;
            return true;
          });
    });
  }
  errors.rethrow();
  Moments total(m);
  for (const Moments& g : parts) total.merge(g);
  ResidualVarianceCurve curve = finish(total, m);
  curve.sampled = true;
  curve.drawn = std::to_string(pairs.size()) + " given pairs";
  curve.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  return curve;
}

void PairSampleOptions::validate() const {
  if (count < 1) throw OptionError("PairSampleOptions.count", "must be at least 1, got 0");
}

std::vector<PairDistance> sample_pair_distances(const PointSet& points,
                                                const PairSampleOptions& options) {
  options.validate();
  const std::size_t count = options.count;
  const std::uint64_t seed = options.seed;
  detail::require_points(points, "residual variance points");
  if (points.rows < 2) throw DataError("residual variance: fewer than 2 points to pair");
  Random rng(seed);
  std::vector<PairDistance> pairs(count);
  for (PairDistance& p : pairs) {
    p.a = static_cast<NodeId>(rng.below(points.rows));
    // b uniform among the other rows: draw from n - 1 and step over a.
    p.b = static_cast<NodeId>(rng.below(points.rows - 1));
    if (p.b >= p.a) ++p.b;
    const float* x = points.row(p.a);
    const float* y = points.row(p.b);
    double s = 0;
    for (std::size_t c = 0; c < points.cols; ++c) {
      const double t = static_cast<double>(x[c]) - y[c];
      s += t * t;
    }
    p.distance = std::sqrt(s);
  }
  return pairs;
}

}  // namespace unfurl
