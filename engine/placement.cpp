#include "engine/placement.hpp"

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdint>
#include <limits>

#include "engine/error.hpp"
#include "engine/parallel.hpp"
#include "engine/spectral.hpp"

namespace unfurl {

void PlaceOptions::validate(std::size_t reference) const {
  if (k < 1) throw OptionError("PlaceOptions.k", "must be at least 1, got 0");
  if (k > reference)
    throw OptionError("PlaceOptions.k", "must be at most the map's " + std::to_string(reference) +
                                            " points, got " + std::to_string(k));
  if (reference < 2) throw DataError("placement: the map has fewer than 2 points");
  if (block_rows < 1) throw OptionError("PlaceOptions.block_rows", "must be at least 1, got 0");
  if (!(far_ratio > 0.0) || !std::isfinite(far_ratio))
    throw OptionError("PlaceOptions.far_ratio", "must be a positive number");
  if (typical_sample < 1)
    throw OptionError("PlaceOptions.typical_sample", "must be at least 1, got 0");
  if (!(typical_distance >= 0.0) || !std::isfinite(typical_distance))
    throw OptionError("PlaceOptions.typical_distance", "must be 0 (measure) or a positive number");
}

Triangulation triangulation_of_map(const DistanceRows& rows,
                                   const std::vector<double>& landmark_coords,
                                   const std::vector<double>& eigenvalues, std::size_t dims) {
  const std::size_t l = rows.rows;
  if (dims < 1 || landmark_coords.size() != l * dims || eigenvalues.size() < dims ||
      rows.sources.size() != l || rows.values.size() != l * rows.cols)
    throw DataError("placement: the landmark rows, coordinates (" +
                    std::to_string(landmark_coords.size()) + " values) and eigenvalues (" +
                    std::to_string(eigenvalues.size()) + ") disagree with " + std::to_string(l) +
                    " landmarks in " + std::to_string(dims) + " dimensions");
  for (NodeId s : rows.sources)
    if (s >= rows.cols)
      throw DataError("placement: a landmark row starts at node " + std::to_string(s) +
                      ", beyond the " + std::to_string(rows.cols) + " map rows");
  Triangulation t;
  t.dims = dims;
  t.landmarks = l;
  t.p.assign(dims * l, 0.0);
  // landmark_coords = v_k sqrt(lambda_k), so v_k / sqrt(lambda_k) = coords / lambda_k.
  for (std::size_t k = 0; k < dims; ++k) {
    const double lambda = eigenvalues[k];
    if (!(lambda > 0.0)) continue;  // an axis beyond the positive spectrum stays 0, as in the map
    for (std::size_t i = 0; i < l; ++i) t.p[k * l + i] = landmark_coords[i * dims + k] / lambda;
  }
  t.mean_squared = landmark_mean_squared(rows);
  return t;
}

LandmarkColumns columns_of(const DistanceRows& rows) {
  LandmarkColumns c;
  c.nodes = rows.cols;
  c.landmarks = rows.rows;
  c.values.resize(rows.values.size());
  for (std::size_t l = 0; l < rows.rows; ++l)
    for (std::size_t n = 0; n < rows.cols; ++n) c.values[n * rows.rows + l] = rows.row(l)[n];
  return c;
}

namespace {

using Clock = std::chrono::steady_clock;

}  // namespace

// Median over an evenly spaced sample of reference points of the distances to their k
// nearest other reference points (self identified by index, so duplicates still count).
double typical_neighbour_distance(const PointSet& reference, const PlaceOptions& o,
                                  StopToken stop) {
  o.validate(reference.rows);
  const Search search = choose_search(o.search, reference.rows, reference.cols);
  const std::size_t n = reference.rows;
  const std::size_t count = std::min(n, o.typical_sample);
  PointSet sample(count, reference.cols);
  std::vector<std::size_t> which(count);
  for (std::size_t i = 0; i < count; ++i) {
    which[i] = i * n / count;
    std::copy_n(reference.row(which[i]), reference.cols, sample.row(i));
  }
  const std::size_t k = std::min(o.k, n - 1) + 1;  // one of them is the point itself
  const KnnResult knn = exact_knn(reference, sample, KnnOptions{k, search, false, 512}, stop);
  std::vector<float> pooled;
  pooled.reserve(count * (k - 1));
  for (std::size_t i = 0; i < count; ++i) {
    std::size_t skip = k - 1;  // the self entry, or the farthest when duplicates hide it
    for (std::size_t j = 0; j < k; ++j)
      if (knn.index[i * k + j] == which[i]) skip = j;
    for (std::size_t j = 0; j < k; ++j)
      if (j != skip) pooled.push_back(knn.distance[i * k + j]);
  }
  const auto middle = pooled.begin() + static_cast<std::ptrdiff_t>(pooled.size() / 2);
  std::nth_element(pooled.begin(), middle, pooled.end());
  return *middle;
}

PlaceResult place_points(const PointSet& reference, const LandmarkColumns& columns,
                         const Triangulation& t, const PointSet& points, const PlaceOptions& o,
                         StopToken stop) {
  const auto start = Clock::now();
  o.validate(reference.rows);
  if (points.cols != reference.cols)
    throw DataError("new points have " + std::to_string(points.cols) +
                    " columns, the map's points " + std::to_string(reference.cols));
  if (columns.nodes != reference.rows || columns.landmarks != t.landmarks ||
      columns.values.size() != columns.nodes * columns.landmarks ||
      t.p.size() != t.dims * t.landmarks || t.mean_squared.size() != t.landmarks)
    throw DataError("placement: the map's geodesic columns (" + std::to_string(columns.nodes) +
                    " x " + std::to_string(columns.landmarks) + "), reference points (" +
                    std::to_string(reference.rows) + ") and triangulation (" +
                    std::to_string(t.landmarks) + " landmarks) disagree in size");
  const std::size_t n = points.rows, l = t.landmarks, dims = t.dims, k = o.k;
  PlaceResult r;
  PlaceSummary& s = r.summary;
  s.points = n;
  s.reference = reference.rows;
  s.landmarks = l;
  s.dims = dims;
  s.k = k;
  s.far_ratio = o.far_ratio;
  s.search_used = choose_search(o.search, reference.rows, reference.cols);
  s.typical_distance = o.typical_distance > 0.0 ? o.typical_distance
                                                : typical_neighbour_distance(reference, o, stop);
  if (!(s.typical_distance > 0.0))
    s.warnings.push_back(
        "the map's typical neighbour distance is 0 (duplicate points): no point is flagged "
        "far from the map");
  const double inverse_typical = s.typical_distance > 0.0 ? 1.0 / s.typical_distance : 0.0;
  // -1/2 P mu, the part of x_a that does not depend on a.
  std::vector<double> p_mean(dims, 0.0);
  for (std::size_t d = 0; d < dims; ++d)
    for (std::size_t i = 0; i < l; ++i) p_mean[d] += t.p[d * l + i] * t.mean_squared[i];

  r.coords = PointSet(n, dims);
  r.nearest_ratio.assign(n, 0.0f);
  r.far.assign(n, 0);
  for (std::size_t b0 = 0; b0 < n; b0 += o.block_rows) {
    stop.check("placement");
    const std::size_t width = std::min(o.block_rows, n - b0);
    PointSet block(width, points.cols);
    std::copy_n(points.row(b0), width * points.cols, block.values.data());
    const KnnResult knn =
        exact_knn(reference, block, KnnOptions{k, s.search_used, false, 512}, stop);
    ExceptionCollector errors;
#pragma omp parallel
    {
      std::vector<double> delta(l);
#pragma omp for schedule(dynamic, 256)
      for (std::ptrdiff_t ai = 0; ai < static_cast<std::ptrdiff_t>(width); ++ai) {
        errors.run([&] {
          const auto a = static_cast<std::size_t>(ai);
          std::fill(delta.begin(), delta.end(), std::numeric_limits<double>::infinity());
          for (std::size_t j = 0; j < k; ++j) {
            const double edge = knn.distance[a * k + j];
            const float* g = columns.values.data() + std::size_t{knn.index[a * k + j]} * l;
            for (std::size_t i = 0; i < l; ++i)
              delta[i] = std::min(delta[i], edge + static_cast<double>(g[i]));
          }
          float* x = r.coords.row(b0 + a);
          for (std::size_t d = 0; d < dims; ++d) {
            const double* pd = t.p.data() + d * l;
            double sum = 0.0;
            for (std::size_t i = 0; i < l; ++i) sum += pd[i] * (delta[i] * delta[i]);
            x[d] = static_cast<float>(-0.5 * (sum - p_mean[d]));
          }
          const double ratio = static_cast<double>(knn.distance[a * k]) * inverse_typical;
          r.nearest_ratio[b0 + a] = static_cast<float>(ratio);
          r.far[b0 + a] = inverse_typical > 0.0 && ratio > o.far_ratio ? 1 : 0;
        });
      }
    }
    errors.rethrow();
  }
  std::vector<FarPoint> far;
  for (std::size_t a = 0; a < n; ++a)
    if (r.far[a]) far.push_back({a, r.nearest_ratio[a]});
  s.far = far.size();
  const std::size_t shown = std::min(far.size(), o.worst);
  std::partial_sort(far.begin(), far.begin() + static_cast<std::ptrdiff_t>(shown), far.end(),
                    [](const FarPoint& x, const FarPoint& y) {
                      return x.ratio > y.ratio || (x.ratio == y.ratio && x.row < y.row);
                    });
  s.worst.assign(far.begin(), far.begin() + static_cast<std::ptrdiff_t>(shown));
  if (s.far > 0)
    s.warnings.push_back(std::to_string(s.far) + " of " + std::to_string(n) +
                         " points are far from the map (nearest reference point beyond " +
                         std::to_string(o.far_ratio).substr(0, 4) +
                         " typical neighbour distances); their coordinates are extrapolations");
  s.seconds = std::chrono::duration<double>(Clock::now() - start).count();
  return r;
}

}  // namespace unfurl
