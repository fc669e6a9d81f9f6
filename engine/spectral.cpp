#include "engine/spectral.hpp"

#include <omp.h>

#include <Spectra/MatOp/DenseSymMatProd.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <utility>

#include "engine/detail/centred_operator.hpp"
#include "engine/detail/eigen_top.hpp"
#include "engine/error.hpp"
#include "engine/parallel.hpp"

namespace unfurl {

void SpectralOptions::validate(std::size_t order) const {
  if (dims < 1) throw OptionError("--dims: must be at least 1, got 0");
  if (dims >= order)
    throw OptionError("--dims: must be below the number of landmarks (" + std::to_string(order) +
                      "), got " + std::to_string(dims));
  if (krylov != 0 && (krylov <= dims || krylov > order))
    throw OptionError("spectral krylov: must be above dims (" + std::to_string(dims) +
                      ") and at most " + std::to_string(order) + ", got " + std::to_string(krylov));
  if (max_iterations < 1) throw OptionError("spectral max_iterations: must be at least 1, got 0");
  if (!(tolerance > 0.0) || !std::isfinite(tolerance))
    throw OptionError("spectral tolerance: must be a positive number");
}

namespace {

using Clock = std::chrono::steady_clock;

detail::IterativeSettings iterative_settings(const SpectralOptions& o) {
  return {o.krylov, o.max_iterations, o.tolerance, o.negative_end};
}

struct CentredGram {
  Eigen::MatrixXd b;              // -1/2 J S J
  std::vector<double> row_means;  // of S: the mean column that triangulation subtracts
};

// B = -1/2 J S J of the symmetrised squared distances S among the given nodes: entry (i, j)
// reads row i at node nodes[j] and row j at node nodes[i].
CentredGram centred_gram(const DistanceRows& rows, const std::vector<NodeId>& nodes) {
  const auto l = static_cast<Eigen::Index>(nodes.size());
  Eigen::MatrixXd b(l, l);
  for (Eigen::Index i = 0; i < l; ++i) {
    const float* ri = rows.row(static_cast<std::size_t>(i));
    for (Eigen::Index j = 0; j <= i; ++j) {
      const double a = ri[nodes[static_cast<std::size_t>(j)]];
      const double c = rows.row(static_cast<std::size_t>(j))[nodes[static_cast<std::size_t>(i)]];
      b(i, j) = b(j, i) = 0.5 * (a * a + c * c);
    }
  }
  const Eigen::VectorXd means = b.rowwise().mean();
  const double grand = means.mean();
  for (Eigen::Index j = 0; j < l; ++j)
    for (Eigen::Index i = 0; i < l; ++i) b(i, j) = -0.5 * (b(i, j) - means[i] - means[j] + grand);
  return {std::move(b), std::vector<double>(means.data(), means.data() + l)};
}

void require_finite(const DistanceRows& rows, const char* stage) {
  if (rows.rows == 0 || rows.cols == 0 || rows.values.size() != rows.rows * rows.cols ||
      rows.sources.size() != rows.rows)
    throw DataError(std::string(stage) + ": the geodesic rows are empty or inconsistent in size");
  for (std::size_t r = 0; r < rows.rows; ++r)
    if (rows.sources[r] >= rows.cols)
      throw DataError(std::string(stage) + ": row " + std::to_string(r) + " starts at node " +
                      std::to_string(rows.sources[r]) + ", beyond the " +
                      std::to_string(rows.cols) + " nodes");
  const auto bad = std::find_if(rows.values.begin(), rows.values.end(),
                                [](float v) { return !std::isfinite(v) || v < 0.0f; });
  if (bad != rows.values.end()) {
    const auto at = static_cast<std::size_t>(bad - rows.values.begin());
    throw DataError(std::string(stage) + ": geodesic row " + std::to_string(at / rows.cols) +
                    ", node " + std::to_string(at % rows.cols) +
                    " is negative, infinite or NaN (unreachable nodes must be removed upstream)");
  }
}

// Fills the spectrum diagnostics, checks there are enough positive axes, fixes the signs
// and returns the eigenvectors scaled by sqrt(eigenvalue) (order x dims, row-major).
std::vector<double> finish_axes(detail::EigenPairs& pairs, std::size_t dims, SpectralResult& out) {
  SpectralSummary& s = out.summary;
  s.converged = pairs.converged;
  s.spectrum_complete = pairs.complete;
  s.iterations = pairs.iterations;
  s.operations = pairs.operations;
  s.warnings.insert(s.warnings.end(), pairs.warnings.begin(), pairs.warnings.end());
  out.spectrum = pairs.spectrum;
  const double top = out.spectrum.empty() ? 0.0 : std::abs(out.spectrum.front());
  const double floor = 1e-12 * top;  // below this an eigenvalue is rounding noise
  double positive = 0.0, negative = 0.0;
  for (double v : out.spectrum) {
    if (v > floor) {
      positive += v;
      ++s.positive;
    } else if (v < -floor) {
      negative -= v;
      ++s.negative;
    }
  }
  out.negative_ratio = positive > 0.0 ? negative / positive : 0.0;
  std::size_t usable = 0;
  while (usable < pairs.values.size() && pairs.values[usable] > floor) ++usable;
  if (usable < dims && !pairs.converged && pairs.values.size() < dims)
    throw DataError("spectral: the Lanczos solver found only " +
                    std::to_string(pairs.values.size()) + " of the top " + std::to_string(dims) +
                    " eigenpairs before giving up; raise its max_iterations or krylov size");
  if (usable < dims)
    throw DataError("spectral: only " + std::to_string(usable) + " of the top " +
                    std::to_string(dims) +
                    " eigenvalues of the centred distance matrix are positive (or found); "
                    "ask for at most " +
                    std::to_string(usable) + " dims");
  pairs.vectors.conservativeResize(Eigen::NoChange, static_cast<Eigen::Index>(dims));
  detail::fix_signs(pairs.vectors);
  const auto order = static_cast<std::size_t>(pairs.vectors.rows());
  std::vector<double> axes(order * dims);
  for (std::size_t k = 0; k < dims; ++k) {
    const double root = std::sqrt(pairs.values[k]);
    for (std::size_t i = 0; i < order; ++i)
      axes[i * dims + k] =
          pairs.vectors(static_cast<Eigen::Index>(i), static_cast<Eigen::Index>(k)) * root;
  }
  return axes;
}

// y_a = -1/2 P (delta_a - mean), delta_a the squared distances from point a to the
// landmarks, P's rows v_k / sqrt(lambda_k). Blocks of points in parallel; within a point the
// sum runs over the landmarks in order, so no result depends on the thread count.
void triangulate(const DistanceRows& rows, const detail::EigenPairs& pairs,
                 const std::vector<double>& column_mean, std::size_t dims, PointSet& coords,
                 StopToken stop) {
  const std::size_t l = rows.rows, n = rows.cols;
  std::vector<double> p(dims * l);  // dims x L
  std::vector<double> p_mean(dims, 0.0);
  for (std::size_t k = 0; k < dims; ++k) {
    const double root = std::sqrt(pairs.values[k]);
    for (std::size_t i = 0; i < l; ++i) {
      p[k * l + i] =
          pairs.vectors(static_cast<Eigen::Index>(i), static_cast<Eigen::Index>(k)) / root;
      p_mean[k] += p[k * l + i] * column_mean[i];
    }
  }
  coords = PointSet(n, dims);
  constexpr std::size_t kBlock = 512;
  const auto blocks = static_cast<std::ptrdiff_t>((n + kBlock - 1) / kBlock);
  ExceptionCollector errors;
#pragma omp parallel
  {
    std::vector<double> acc(dims * kBlock);
#pragma omp for schedule(dynamic, 4)
    for (std::ptrdiff_t blk = 0; blk < blocks; ++blk) {
      errors.run([&] {
        stop.check("spectral");
        const std::size_t a0 = static_cast<std::size_t>(blk) * kBlock;
        const std::size_t width = std::min(kBlock, n - a0);
        std::fill(acc.begin(), acc.end(), 0.0);
        for (std::size_t i = 0; i < l; ++i) {
          const float* row = rows.row(i) + a0;
          for (std::size_t k = 0; k < dims; ++k) {
            const double pk = p[k * l + i];
            double* out = acc.data() + k * kBlock;
            for (std::size_t a = 0; a < width; ++a) {
              const double d = row[a];
              out[a] += pk * (d * d);
            }
          }
        }
        for (std::size_t a = 0; a < width; ++a)
          for (std::size_t k = 0; k < dims; ++k)
            coords.row(a0 + a)[k] = static_cast<float>(-0.5 * (acc[k * kBlock + a] - p_mean[k]));
      });
    }
  }
  errors.rethrow();
}

detail::EigenPairs solve(const Eigen::MatrixXd& b, const SpectralOptions& o, SpectralSummary& s) {
  if (static_cast<std::size_t>(b.rows()) <= o.dense_limit) {
    s.solver = "dense";
    return detail::dense_top(b, o.dims);
  }
  s.solver = "lanczos";
  Spectra::DenseSymMatProd<double> op(b);
  return detail::iterative_top(op, o.dims, iterative_settings(o));
}

}  // namespace

SpectralResult landmark_mds(const DistanceRows& landmark_rows, const SpectralOptions& options,
                            StopToken stop) {
  const auto start = Clock::now();
  options.validate(landmark_rows.rows);
  require_finite(landmark_rows, "landmark MDS");
  SpectralResult out;
  out.summary.order = landmark_rows.rows;
  out.summary.points = landmark_rows.cols;
  out.summary.threads = omp_get_max_threads();
  const CentredGram gram = centred_gram(landmark_rows, landmark_rows.sources);
  stop.check("spectral");
  detail::EigenPairs pairs = solve(gram.b, options, out.summary);
  out.landmark_coords = finish_axes(pairs, options.dims, out);
  triangulate(landmark_rows, pairs, gram.row_means, options.dims, out.coords, stop);
  out.summary.seconds = std::chrono::duration<double>(Clock::now() - start).count();
  return out;
}

SpectralResult exact_mds(const DistanceRows& all_rows, const SpectralOptions& options,
                         StopToken stop) {
  const auto start = Clock::now();
  const std::size_t n = all_rows.cols;
  if (all_rows.rows != n)
    throw DataError("exact MDS: needs one geodesic row per node (" + std::to_string(n) + "), got " +
                    std::to_string(all_rows.rows));
  options.validate(n);
  require_finite(all_rows, "exact MDS");
  for (std::size_t r = 0; r < n; ++r)
    if (all_rows.sources[r] != r)
      throw DataError("exact MDS: row " + std::to_string(r) + " starts at node " +
                      std::to_string(all_rows.sources[r]) + "; rows must be in node order");
  SpectralResult out;
  out.summary.order = n;
  out.summary.points = n;
  out.summary.threads = omp_get_max_threads();
  detail::EigenPairs pairs;
  if (n <= options.dense_limit) {
    pairs = solve(centred_gram(all_rows, all_rows.sources).b, options, out.summary);
  } else {
    out.summary.solver = "lanczos";
    detail::CentredSquaredOperator op(all_rows, stop);
    pairs = detail::iterative_top(op, options.dims, iterative_settings(options));
  }
  out.landmark_coords = finish_axes(pairs, options.dims, out);
  out.coords = PointSet(n, options.dims);
  for (std::size_t i = 0; i < out.landmark_coords.size(); ++i)
    out.coords.values[i] = static_cast<float>(out.landmark_coords[i]);
  out.summary.seconds = std::chrono::duration<double>(Clock::now() - start).count();
  return out;
}

std::size_t exact_mode_bytes(std::size_t n, const SpectralOptions& options) {
  const std::size_t m = options.dims;
  const std::size_t ncv = detail::krylov_size(n, m, options.krylov);
  const std::size_t rows = n * n * sizeof(float);
  const std::size_t solver = n <= options.dense_limit
                                 ? 3 * n * n * sizeof(double)  // B, eigenvectors, workspace
                                 : detail::CentredSquaredOperator::work_bytes(n) +
                                       2 * n * ncv * sizeof(double);  // Lanczos basis, vectors
  const std::size_t output = n * m * (sizeof(float) + sizeof(double));
  const std::size_t dijkstra =  // per thread: distance array and a heap of about 2 entries per node
      static_cast<std::size_t>(omp_get_max_threads()) * n * (sizeof(double) + 32);
  return rows + solver + output + dijkstra;
}

}  // namespace unfurl
