// The top eigenpairs of a symmetric matrix, dense (Eigen, whole spectrum) or iterative
// (Spectra's Lanczos solver on an operator), plus the deterministic sign rule.
#pragma once

#include <Spectra/SymEigsSolver.h>
#include <Eigen/Dense>

#include <algorithm>
#include <cstddef>
#include <string>
#include <vector>

namespace unfurl::detail {

struct EigenPairs {
  std::vector<double> values;    // the kept eigenvalues, descending
  Eigen::MatrixXd vectors;       // n x values.size(), unit columns in the same order
  std::vector<double> spectrum;  // every eigenvalue computed, descending
  Eigen::MatrixXd computed;      // iterative solver: n x spectrum.size(), the same order
  bool complete = false;         // spectrum is the whole spectrum
  std::size_t from_top = 0;      // the first from_top of spectrum are the largest eigenvalues;
                                 // the rest (iterative, both ends) the smallest
  bool converged = true;         // the iterative solver reported success
  std::size_t iterations = 0;    // Spectra restarts (0 for the dense solver)
  std::size_t operations = 0;    // operator applications (0 for the dense solver)
  std::vector<std::string> warnings;
};

// Whole spectrum by Eigen's SelfAdjointEigenSolver; keeps the top m pairs.
EigenPairs dense_top(const Eigen::MatrixXd& matrix, std::size_t m);

struct IterativeSettings {
  std::size_t krylov = 0;  // ncv; 0: min(n, max(2m + 1, 10)) for the top end alone, else 20
  std::size_t max_iterations = 1000;
  double tolerance = 1e-10;
  bool negative_end = true;  // also compute the most negative eigenvalues
  std::size_t per_end = 0;   // pairs computed at each end (at least m): more pairs found,
                             // less variance left for the whole-spectrum estimate
};

// The top end alone converged fastest with 10 (Swiss roll, S-curve and the buoys scenario, 6,000
// points, exact mode: 11 operator passes for 2 pairs against 21 with 20; for 3 pairs 26-31
// against 21-36); both ends with 20 (35 passes at 10,000 points, 39 with 10).
inline std::size_t krylov_size(std::size_t n, std::size_t m, std::size_t requested, bool both) {
  if (requested) return std::min(n, requested);
  return std::min(n, std::max<std::size_t>(2 * m + 1, both ? 20 : 10));
}

// Top m pairs of the symmetric operator `op` (rows(), cols(), perform_op(x, y)).
// Non-convergence is a status and a warning, never an exception.
template <class Op>
EigenPairs iterative_top(Op& op, std::size_t m, const IterativeSettings& s) {
  using Spectra::CompInfo;
  using Spectra::SortRule;
  const auto n = static_cast<std::size_t>(op.rows());
  const auto nev = static_cast<Eigen::Index>(m);
  EigenPairs out;
  // With the negative end wanted, one run finds both ends (BothEnds: nev / 2 from each end,
  // from one Krylov basis); the top m are then the first m in descending order.
  const auto end = static_cast<Eigen::Index>(std::max(m, s.per_end));
  const bool both = s.negative_end && 2 * static_cast<std::size_t>(end) < n;
  const auto ncv = static_cast<Eigen::Index>(krylov_size(n, m, s.krylov, both));
  const Eigen::Index wanted = both ? 2 * end : nev;
  const Eigen::Index basis =
      both ? std::max(ncv, std::min<Eigen::Index>(static_cast<Eigen::Index>(n), 2 * wanted + 1))
           : ncv;
  Spectra::SymEigsSolver<Op> solver(op, wanted, basis);
  solver.init();
  solver.compute(both ? SortRule::BothEnds : SortRule::LargestAlge,
                 static_cast<Eigen::Index>(s.max_iterations), s.tolerance, SortRule::LargestAlge);
  out.iterations = static_cast<std::size_t>(solver.num_iterations());
  out.operations = static_cast<std::size_t>(solver.num_operations());
  if (solver.info() != CompInfo::Successful) {
    out.converged = false;
    out.warnings.push_back("spectral: the Lanczos solver did not converge after " +
                           std::to_string(out.iterations) + " restarts");
  }
  const Eigen::VectorXd values = solver.eigenvalues();  // descending
  const Eigen::MatrixXd vectors = solver.eigenvectors();
  const auto kept = std::min<Eigen::Index>(nev, values.size());
  out.values.assign(values.data(), values.data() + kept);
  out.vectors = vectors.leftCols(kept);
  out.spectrum.assign(values.data(), values.data() + values.size());
  out.computed = vectors;
  out.from_top = both ? std::min<std::size_t>(static_cast<std::size_t>(end), out.spectrum.size())
                      : out.spectrum.size();
  if (!std::is_sorted(out.spectrum.begin(), out.spectrum.end(), std::greater<>())) {
    std::vector<Eigen::Index> at(out.spectrum.size());
    for (std::size_t i = 0; i < at.size(); ++i) at[i] = static_cast<Eigen::Index>(i);
    std::stable_sort(at.begin(), at.end(),
                     [&](Eigen::Index a, Eigen::Index b) { return values[a] > values[b]; });
    for (std::size_t i = 0; i < at.size(); ++i) {
      out.spectrum[i] = values[at[i]];
      out.computed.col(static_cast<Eigen::Index>(i)) = vectors.col(at[i]);
    }
  }
  return out;
}

// Makes each column's largest-magnitude entry positive (ties: the lowest row index), so the
// map does not flip with the solver's arbitrary sign.
void fix_signs(Eigen::MatrixXd& vectors);

}  // namespace unfurl::detail
