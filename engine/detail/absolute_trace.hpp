// trace(|A|) of a symmetric operator without its whole spectrum: stochastic Lanczos quadrature.
//
// Hutchinson (1989): for z with independent random signs, E[z' f(A) z] = trace f(A). Each
// z' f(A) z comes from `steps` Lanczos steps started at z / |z|: with T = U Theta U' the
// tridiagonal matrix of the steps, z' f(A) z ~ |z|^2 sum_k U_0k^2 f(theta_k), a Gauss
// quadrature of the spectral measure of z (Ubaru, Chen and Saad, "Fast estimation of tr(f(A))
// via stochastic Lanczos quadrature", SIAM J. Matrix Anal. Appl. 38 (2017)); here f = |x|.
//
// Known eigenpairs (the ones the eigen solver already found) are deflated: their |lambda| is
// added exactly, and the probes and every Lanczos vector are kept orthogonal to them. A few
// large eigenvalues otherwise dominate the variance of z' |A| z (on a Swiss roll the top one
// is ~100 times the rest together) and the estimate would be useless.
//
// The standard error is that of the mean over probes (sample standard deviation / sqrt(p)); it
// leaves out the quadrature error of the finite number of steps. Probe p draws its signs from
// Random(seed + p), and every product is the operator's own (thread-count independent), so the
// estimate depends on the seed only.
#pragma once

#include <Eigen/Dense>

#include <cmath>
#include <cstddef>
#include <cstdint>
#include <vector>

#include "engine/random.hpp"

namespace unfurl::detail {

struct AbsoluteTrace {
  double value = 0.0;           // estimate of trace(|A|)
  double standard_error = 0.0;  // over the probes
  std::size_t probes = 0;
  std::size_t steps = 0;       // Lanczos steps per probe (fewer when the space is exhausted)
  std::size_t operations = 0;  // operator applications
};

// Y = A X for the columns of X: one pass of the operator for all of them when it offers
// perform_block (the implicit exact-mode operator reads its N x N rows once per pass).
template <class Op>
void apply_columns(Op& op, const Eigen::MatrixXd& x, Eigen::MatrixXd& y) {
  if constexpr (requires { op.perform_block(x.data(), y.data(), std::size_t{1}); }) {
    op.perform_block(x.data(), y.data(), static_cast<std::size_t>(x.cols()));
  } else {
    for (Eigen::Index c = 0; c < x.cols(); ++c) op.perform_op(x.col(c).data(), y.col(c).data());
  }
}

// r -= Q (Q' r) over the first `used` columns of a float32 basis, the sums in double.
inline void remove_span(const Eigen::MatrixXf& q, Eigen::Index used, Eigen::VectorXd& r) {
  const Eigen::Index n = q.rows();
  Eigen::VectorXd along(used);
  for (Eigen::Index c = 0; c < used; ++c) {
    const float* qc = q.col(c).data();
    double sum = 0.0;  // a fixed vector width: the same order on every run
#pragma omp simd reduction(+ : sum)
    for (Eigen::Index i = 0; i < n; ++i) sum += static_cast<double>(qc[i]) * r[i];
    along[c] = sum;
  }
  for (Eigen::Index c = 0; c < used; ++c) {
    const float* qc = q.col(c).data();
    const double h = along[c];
    for (Eigen::Index i = 0; i < n; ++i) r[i] -= static_cast<double>(qc[i]) * h;
  }
}

// known_vectors: orthonormal columns (eigenvectors of A), known_values their eigenvalues.
// The probes run their Lanczos steps in lockstep, so each step is one block product.
template <class Op>
AbsoluteTrace absolute_trace(Op& op, const Eigen::MatrixXd& known_vectors,
                             const std::vector<double>& known_values, std::size_t probes,
                             std::size_t steps, std::uint64_t seed) {
  const auto n = static_cast<Eigen::Index>(op.rows());
  const Eigen::Index known = known_vectors.cols();
  const auto m = static_cast<Eigen::Index>(std::min(steps, static_cast<std::size_t>(n - known)));
  const auto p = static_cast<Eigen::Index>(probes);
  AbsoluteTrace out;
  out.probes = probes;
  out.steps = static_cast<std::size_t>(m);
  double exact_part = 0.0;
  for (double v : known_values) exact_part += std::abs(v);
  out.value = exact_part;
  if (m == 0 || p == 0) return out;
  // Coefficient-wise products: Eigen's parallel GEMM on these thin shapes (16 x 16 deep
  // over n) spent more time waiting for its threads than multiplying on a busy machine.
  auto deflate = [&](Eigen::MatrixXd& v) {
    if (known == 0) return;
    const Eigen::MatrixXd along = known_vectors.transpose().lazyProduct(v);
    v.noalias() -= known_vectors.lazyProduct(along);
  };
  Eigen::MatrixXd z(n, p);
  for (Eigen::Index c = 0; c < p; ++c) {
    Random rng(seed + static_cast<std::uint64_t>(c));
    for (Eigen::Index i = 0; i < n; ++i) z(i, c) = (rng.next() >> 63) ? 1.0 : -1.0;
  }
  deflate(z);
  std::vector<double> norm2(static_cast<std::size_t>(p));
  // The Lanczos vectors are kept in float32 for the reorthogonalisation only (half the memory:
  // 16 probes x 50 steps at N = 10,000 is 31 MiB instead of 61): the recurrence itself runs
  // in double, and orthogonality to about 1e-7 is all the quadrature needs (Simon, Math.
  // Comp. 42, 1984: semi-orthogonality keeps the tridiagonal matrix accurate).
  std::vector<Eigen::MatrixXf> basis(static_cast<std::size_t>(p), Eigen::MatrixXf(n, m));
  std::vector<std::vector<double>> alpha(norm2.size()), beta(norm2.size());
  std::vector<bool> done(norm2.size(), false);
  Eigen::MatrixXd current(n, p), w(n, p);
  for (Eigen::Index c = 0; c < p; ++c) {
    const auto pc = static_cast<std::size_t>(c);
    norm2[pc] = z.col(c).squaredNorm();
    done[pc] = !(norm2[pc] > 0.0);
    current.col(c) =
        done[pc] ? Eigen::VectorXd::Zero(n) : Eigen::VectorXd(z.col(c) / std::sqrt(norm2[pc]));
  }
  for (Eigen::Index j = 0; j < m; ++j) {
    apply_columns(op, current, w);
    out.operations += static_cast<std::size_t>(p);
    deflate(w);
    for (Eigen::Index c = 0; c < p; ++c) {
      const auto pc = static_cast<std::size_t>(c);
      if (done[pc]) continue;
      Eigen::MatrixXf& q = basis[pc];
      q.col(j) = current.col(c).cast<float>();
      Eigen::VectorXd r = w.col(c);
      alpha[pc].push_back(current.col(c).dot(r));
      // Full reorthogonalisation, twice: the steps are few, and lost orthogonality would
      // produce ghost copies of the large eigenvalues in the quadrature.
      for (int pass = 0; pass < 2; ++pass) remove_span(q, j + 1, r);
      const double b = r.norm();
      if (j + 1 == m || !(b > 1e-13 * std::abs(alpha[pc].front()) + 1e-300)) {
        done[pc] = true;  // the steps are used up, or an invariant subspace was found
        current.col(c).setZero();
        continue;
      }
      beta[pc].push_back(b);
      current.col(c) = r / b;
    }
  }
  std::vector<double> samples;
  for (std::size_t c = 0; c < norm2.size(); ++c) {
    const auto used = static_cast<Eigen::Index>(alpha[c].size());
    double sum = 0.0;
    if (used > 0) {
      Eigen::MatrixXd t = Eigen::MatrixXd::Zero(used, used);
      for (Eigen::Index j = 0; j < used; ++j) {
        t(j, j) = alpha[c][static_cast<std::size_t>(j)];
        if (j + 1 < used) t(j, j + 1) = t(j + 1, j) = beta[c][static_cast<std::size_t>(j)];
      }
      Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> tri(t);
      for (Eigen::Index k = 0; k < used; ++k)
        sum += tri.eigenvectors()(0, k) * tri.eigenvectors()(0, k) * std::abs(tri.eigenvalues()[k]);
    }
    samples.push_back(norm2[c] * sum);
  }
  double mean = 0.0;
  for (double v : samples) mean += v;
  mean /= static_cast<double>(samples.size());
  double var = 0.0;
  for (double v : samples) var += (v - mean) * (v - mean);
  if (samples.size() > 1) var /= static_cast<double>(samples.size() - 1);
  out.value = exact_part + mean;
  out.standard_error = std::sqrt(var / static_cast<double>(samples.size()));
  return out;
}

}  // namespace unfurl::detail
