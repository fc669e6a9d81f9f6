#include "engine/spectral.hpp"

#include <omp.h>

#include <Spectra/MatOp/DenseSymMatProd.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <limits>
#include <utility>

#include "engine/detail/absolute_trace.hpp"
#include "engine/detail/centred_operator.hpp"
#include "engine/detail/eigen_top.hpp"
#include "engine/detail/parallel_chunks.hpp"
#include "engine/error.hpp"
#include "engine/parallel.hpp"

namespace unfurl {

void SpectralOptions::validate(std::size_t order) const {
  if (dims < 1) throw OptionError("SpectralOptions.dims", "must be at least 1, got 0");
  if (dims >= order)
    throw OptionError("SpectralOptions.dims", "must be below the number of landmarks (" +
                                                  std::to_string(order) + "), got " +
                                                  std::to_string(dims));
  if (krylov != 0 && (krylov <= dims || krylov > order))
    throw OptionError("SpectralOptions.krylov", "must be above dims (" + std::to_string(dims) +
                                                    ") and at most " + std::to_string(order) +
                                                    ", got " + std::to_string(krylov));
  if (max_iterations < 1)
    throw OptionError("SpectralOptions.max_iterations", "must be at least 1, got 0");
  if (!(tolerance > 0.0) || !std::isfinite(tolerance))
    throw OptionError("SpectralOptions.tolerance", "must be a positive number");
  if (probes < 2)
    throw OptionError("SpectralOptions.probes",
                      "must be at least 2 (for an error bound), got " + std::to_string(probes));
  if (quadrature < 1)
    throw OptionError("SpectralOptions.quadrature", "must be at least 1 step, got 0");
}

namespace {

using Clock = std::chrono::steady_clock;

// Without the mass estimate the deflation pairs serve nothing: dims pairs at each end.
detail::IterativeSettings iterative_settings(const SpectralOptions& o) {
  return {o.krylov, o.max_iterations, o.tolerance, o.negative_end, o.mass ? o.deflate : o.dims};
}

}  // namespace

SpectrumMass whole_spectrum_mass(const std::vector<double>& spectrum) {
  SpectrumMass mass;
  mass.exact = true;
  for (double v : spectrum) {
    if (v > 0.0) mass.positive += v;
    if (v < 0.0) mass.negative -= v;
    mass.trace += v;
  }
  return mass;
}

namespace {

// The whole spectrum's masses from trace(B) and an estimate of trace(|B|) with the computed
// pairs deflated (see SpectrumMass).
template <class Op>
SpectrumMass estimated_mass(Op& op, double trace, const detail::EigenPairs& pairs,
                            const SpectralOptions& o, SpectralSummary& s) {
  if (!o.mass) {
    SpectrumMass unknown;
    unknown.computed = false;
    unknown.trace = trace;
    return unknown;
  }
  const detail::AbsoluteTrace abs = detail::absolute_trace(op, pairs.computed, pairs.spectrum,
                                                           o.probes, o.quadrature, o.probe_seed);
  s.operations_mass = abs.operations;
  SpectrumMass mass;
  mass.trace = trace;
  mass.standard_error = abs.standard_error;
  mass.probes = abs.probes;
  mass.steps = abs.steps;
  double known_positive = 0.0, known_negative = 0.0;
  for (double v : pairs.spectrum) (v > 0.0 ? known_positive : known_negative) += std::abs(v);
  mass.positive = std::max(known_positive, 0.5 * (abs.value + trace));
  mass.negative = std::max(known_negative, 0.5 * (abs.value - trace));
  return mass;
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
  // Rows in parallel (L x N values: a gigabyte at a million nodes); the first bad row is
  // named whatever the thread count.
  std::vector<std::size_t> bad_at(rows.rows, rows.values.size());
  detail::parallel_chunks(rows.rows, 1, {}, "spectral", [&](std::size_t r, std::size_t) {
    const float* row = rows.row(r);
    const float* bad =
        std::find_if(row, row + rows.cols, [](float v) { return !std::isfinite(v) || v < 0.0f; });
    if (bad != row + rows.cols) bad_at[r] = r * rows.cols + static_cast<std::size_t>(bad - row);
  });
  const std::size_t at = *std::min_element(bad_at.begin(), bad_at.end());
  if (at < rows.values.size()) {
    throw DataError(std::string(stage) + ": geodesic row " + std::to_string(at / rows.cols) +
                    ", node " + std::to_string(at % rows.cols) +
                    " is negative, infinite or NaN (unreachable nodes must be removed upstream)");
  }
}

std::string short_number(double v) {
  char text[32];
  std::snprintf(text, sizeof text, "%.3g", v);
  return text;
}

// The noise floor of the eigenvalues of B given float32 geodesics (README, "Reading a map
// with care"). A geodesic d summed in float32 over H hops carries a rounding error of at most
// H u d, u = 2^-24 (each partial sum is at most d and rounds by at most u times itself;
// Higham, Accuracy and Stability of Numerical Algorithms, 2002, section 4.2). Then
// |delta d^2| <= 2 H u d^2, every entry of B = -1/2 J S J moves by at most H u D^2 (D the
// longest geodesic; J's centring does not grow the norm), so ||delta B||_2 <= n H u D^2, and
// by Weyl's inequality no eigenvalue moves further:
//   floor = n H u D^2.
// H is not recorded by Dijkstra; it is estimated as D over the median, across rows, of each
// row's shortest positive distance (a nearest neighbour, so the estimate overstates H).
double noise_floor(const DistanceRows& rows, std::size_t order) {
  // Rows in parallel; a maximum and a minimum do not depend on the order they are taken in,
  // and widening float to double keeps the order, so the longest is taken in float.
  std::vector<float> row_longest(rows.rows, 0.0f);
  std::vector<float> row_close(rows.rows, std::numeric_limits<float>::infinity());
  detail::parallel_chunks(rows.rows, 1, {}, "spectral", [&](std::size_t r, std::size_t) {
    const float* row = rows.row(r);
    float high = 0.0f, close = std::numeric_limits<float>::infinity();
    for (std::size_t j = 0; j < rows.cols; ++j) {
      high = std::max(high, row[j]);
      if (row[j] > 0.0f) close = std::min(close, row[j]);
    }
    row_longest[r] = high;
    row_close[r] = close;
  });
  double longest = 0.0;
  std::vector<double> nearest;
  for (std::size_t r = 0; r < rows.rows; ++r) {
    longest = std::max(longest, static_cast<double>(row_longest[r]));
    if (std::isfinite(row_close[r])) nearest.push_back(row_close[r]);
  }
  if (nearest.empty() || !(longest > 0.0)) return 0.0;
  const auto middle = nearest.begin() + static_cast<std::ptrdiff_t>(nearest.size() / 2);
  std::nth_element(nearest.begin(), middle, nearest.end());
  const double hops = std::max(1.0, std::ceil(longest / *middle));
  constexpr double kRounding = 0x1.0p-24;  // float32 unit roundoff
  return static_cast<double>(order) * hops * kRounding * longest * longest;
}

// Fills the spectrum diagnostics, checks the top eigenpairs were found, names the axes at or
// below the noise floor (an axis beyond the positive part of the spectrum is set to 0: there
// is nothing to take the root of), fixes the signs and returns the eigenvectors scaled by
// sqrt(eigenvalue) (order x dims, row-major).
std::vector<double> finish_axes(detail::EigenPairs& pairs, std::size_t dims,
                                const SpectrumMass& mass, double noise, SpectralResult& out) {
  SpectralSummary& s = out.summary;
  s.converged = pairs.converged;
  s.spectrum_complete = pairs.complete;
  s.largest = pairs.from_top;
  s.iterations = pairs.iterations;
  s.operations = pairs.operations;
  s.noise_floor = noise;
  s.warnings.insert(s.warnings.end(), pairs.warnings.begin(), pairs.warnings.end());
  out.spectrum = pairs.spectrum;
  for (double v : out.spectrum) {
    if (v > noise) ++s.positive;
    if (v < -noise) ++s.negative;
  }
  out.mass = mass;
  out.negative_ratio = mass.ratio();
  if (pairs.values.size() < dims)
    throw DataError("spectral: the Lanczos solver found only " +
                    std::to_string(pairs.values.size()) + " of the top " + std::to_string(dims) +
                    " eigenpairs before giving up; raise its max_iterations or krylov size");
  if (!(pairs.values.front() > 0.0))
    throw DataError(
        "spectral: the centred distance matrix has no positive eigenvalue; the "
        "geodesics give no map");
  for (std::size_t k = 0; k < dims; ++k) {
    const double v = pairs.values[k];
    if (v > noise) continue;
    s.noise_axes.push_back(k + 1);
    s.warnings.push_back(
        v > 0.0 ? "axis " + std::to_string(k + 1) + " carries no structure: its eigenvalue " +
                      short_number(v) + " is at or below the noise floor " + short_number(noise) +
                      " of float32 geodesics"
                : "axis " + std::to_string(k + 1) +
                      " carries no structure and is set to 0: SpectralOptions.dims " +
                      std::to_string(dims) +
                      " goes beyond the positive part of the spectrum (eigenvalue " +
                      short_number(v) + ")");
  }
  pairs.vectors.conservativeResize(Eigen::NoChange, static_cast<Eigen::Index>(dims));
  detail::fix_signs(pairs.vectors);
  const auto order = static_cast<std::size_t>(pairs.vectors.rows());
  std::vector<double> axes(order * dims);
  for (std::size_t k = 0; k < dims; ++k) {
    const double root = std::sqrt(std::max(pairs.values[k], 0.0));
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
    const double v = pairs.values[k];  // an axis beyond the positive part stays 0
    const double inverse_root = v > 0.0 ? 1.0 / std::sqrt(v) : 0.0;
    for (std::size_t i = 0; i < l; ++i) {
      p[k * l + i] =
          pairs.vectors(static_cast<Eigen::Index>(i), static_cast<Eigen::Index>(k)) * inverse_root;
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
        stop.advance(width);
      });
    }
  }
  errors.rethrow();
}

// A dense symmetric B with a block product for the spectrum estimate's probes: row i of the
// result is column i of B times the block (B is symmetric; columns are contiguous), rows in
// parallel, each a product in a fixed order, so nothing depends on the thread count.
struct DenseBlockOperator {
  const Eigen::MatrixXd& b;
  Eigen::Index rows() const { return b.rows(); }
  Eigen::Index cols() const { return b.cols(); }
  void perform_op(const double* x, double* y) const { perform_block(x, y, 1); }
  void perform_block(const double* x, double* y, std::size_t k) const {
    const auto n = b.rows();
    const auto width = static_cast<Eigen::Index>(k);
    const Eigen::Map<const Eigen::MatrixXd> in(x, n, width);
    Eigen::Map<Eigen::MatrixXd> out(y, n, width);
#pragma omp parallel for schedule(static)
    for (Eigen::Index i = 0; i < n; ++i) out.row(i).noalias() = b.col(i).transpose() * in;
  }
};

detail::EigenPairs solve(const Eigen::MatrixXd& b, const SpectralOptions& o, SpectralSummary& s,
                         SpectrumMass& mass) {
  if (static_cast<std::size_t>(b.rows()) <= o.dense_limit) {
    s.solver = "dense";
    detail::EigenPairs pairs = detail::dense_top(b, o.dims);
    mass = whole_spectrum_mass(pairs.spectrum);
    return pairs;
  }
  s.solver = "lanczos";
  Spectra::DenseSymMatProd<double> op(b);
  detail::EigenPairs pairs = detail::iterative_top(op, o.dims, iterative_settings(o));
  const DenseBlockOperator block{b};
  mass = estimated_mass(block, b.trace(), pairs, o, s);
  return pairs;
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
  SpectrumMass mass;
  detail::EigenPairs pairs = solve(gram.b, options, out.summary, mass);
  out.landmark_coords =
      finish_axes(pairs, options.dims, mass, noise_floor(landmark_rows, landmark_rows.rows), out);
  triangulate(landmark_rows, pairs, gram.row_means, options.dims, out.coords, stop);
  out.summary.seconds = std::chrono::duration<double>(Clock::now() - start).count();
  return out;
}

std::vector<double> landmark_mean_squared(const DistanceRows& landmark_rows) {
  return centred_gram(landmark_rows, landmark_rows.sources).row_means;
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
  SpectrumMass mass;
  if (n <= options.dense_limit) {
    pairs = solve(centred_gram(all_rows, all_rows.sources).b, options, out.summary, mass);
  } else {
    out.summary.solver = "lanczos";
    detail::CentredSquaredOperator op(all_rows, stop);
    pairs = detail::iterative_top(op, options.dims, iterative_settings(options));
    mass = estimated_mass(op, op.trace(), pairs, options, out.summary);
  }
  out.landmark_coords = finish_axes(pairs, options.dims, mass, noise_floor(all_rows, n), out);
  out.coords = PointSet(n, options.dims);
  for (std::size_t i = 0; i < out.landmark_coords.size(); ++i)
    out.coords.values[i] = static_cast<float>(out.landmark_coords[i]);
  out.summary.seconds = std::chrono::duration<double>(Clock::now() - start).count();
  return out;
}

std::size_t spectral_solver_bytes(std::size_t n, const SpectralOptions& options) {
  if (n <= options.dense_limit) return 3 * n * n * sizeof(double);
  // The sizes iterative_top and absolute_trace allocate (engine/detail/eigen_top.hpp,
  // engine/detail/absolute_trace.hpp).
  const std::size_t m = options.dims;
  const std::size_t end = std::max(m, options.mass ? options.deflate : m);
  const bool both = options.negative_end && 2 * end < n;
  const std::size_t wanted = both ? 2 * end : m;
  const std::size_t ncv = detail::krylov_size(n, m, options.krylov, both);
  const std::size_t basis = both ? std::max(ncv, std::min(n, 2 * wanted + 1)) : ncv;
  // Basis and residual, then eigenvectors(), its copy and the kept pairs.
  const std::size_t lanczos = (basis + 1 + 3 * wanted) * n * sizeof(double);
  const std::size_t p = options.probes;
  const std::size_t steps = std::min(options.quadrature, n > wanted ? n - wanted : 0);
  const std::size_t mass = (p * steps) * n * sizeof(float) +  // the probes' Lanczos vectors
                           (3 * p + wanted + m) * n * sizeof(double);  // z, current, w; pairs
  if (!options.mass) return lanczos + detail::CentredSquaredOperator::work_bytes(n, 1);
  return std::max(lanczos, mass) + detail::CentredSquaredOperator::work_bytes(n, p);
}

std::size_t exact_mode_bytes(std::size_t n, const SpectralOptions& options) {
  const std::size_t m = options.dims;
  const std::size_t rows = n * n * sizeof(float);
  const std::size_t output = n * m * (sizeof(float) + sizeof(double));
  const std::size_t dijkstra =  // per thread: distance array and a heap of about 2 entries per node
      static_cast<std::size_t>(omp_get_max_threads()) * n * (sizeof(double) + 32);
  return rows + spectral_solver_bytes(n, options) + output + dijkstra;
}

}  // namespace unfurl
