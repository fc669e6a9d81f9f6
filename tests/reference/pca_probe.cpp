// Exposes the engine's one PCA routine (engine/detail/pca.hpp) to tests/reference/pca_check.py.
//
// pca_probe POINTS COMPONENTS SIGN OUT
//   POINTS: int64 n, int64 d, then float32[n * d] row-major (little-endian);
//   SIGN: convention (largest-magnitude entry positive) | solver (the eigen solver's signs)
//         | top:LIMIT (fit_pca_top over sample_rows(n, LIMIT), the morton order's fit);
//   OUT: float64 mean[d], axes[COMPONENTS * d] (one axis per row), variances[d] (top:
//        variances[COMPONENTS]), kept_share, projections[n * COMPONENTS] (row-major), no
//        header.
// Errors go to stderr with exit code 65; usage errors 64.
#include <cstdint>
#include <fstream>
#include <iostream>
#include <string>
#include <vector>

#include "engine/detail/pca.hpp"
#include "engine/error.hpp"

int main(int argc, char** argv) try {
  const std::vector<std::string> a(argv, argv + argc);
  const bool top = a.size() == 5 && a[3].rfind("top:", 0) == 0;
  if (a.size() != 5 || (a[3] != "convention" && a[3] != "solver" && !top)) {
    std::cerr << "pca_probe: usage: see the comment at the top of pca_probe.cpp\n";
    return 64;
  }
  std::ifstream in(a[1], std::ios::binary);
  std::int64_t header[2];
  in.read(reinterpret_cast<char*>(header), sizeof header);
  if (!in || header[0] < 1 || header[1] < 1) throw unfurl::IoError(a[1] + ": bad header");
  unfurl::PointSet p(static_cast<std::size_t>(header[0]), static_cast<std::size_t>(header[1]));
  in.read(reinterpret_cast<char*>(p.values.data()),
          static_cast<std::streamsize>(p.values.size() * sizeof(float)));
  if (!in) throw unfurl::IoError(a[1] + ": file ends early");
  const std::size_t m = std::stoul(a[2]);
  const auto rows = [&](std::size_t b, std::size_t e) {
    return unfurl::detail::double_rows(p, b, e);
  };
  const auto sign = a[3] == "convention" ? unfurl::detail::AxisSign::largest_entry_positive
                                         : unfurl::detail::AxisSign::as_solved;
  unfurl::detail::PcaFit fit;
  if (top) {
    const auto at = unfurl::detail::sample_rows(p.rows, std::stoul(a[3].substr(4)));
    const auto sampled = [&](std::size_t b, std::size_t e) {
      Eigen::MatrixXd x(static_cast<Eigen::Index>(e - b), static_cast<Eigen::Index>(p.cols));
      for (std::size_t i = b; i < e; ++i)
        x.row(static_cast<Eigen::Index>(i - b)) = rows(at[i], at[i] + 1);
      return x;
    };
    fit = unfurl::detail::fit_pca_top(at.size(), p.cols, sampled, m);
  } else {
    fit = unfurl::detail::fit_pca(p.rows, p.cols, rows, m, sign);
  }
  const Eigen::MatrixXd y = unfurl::detail::project_rows(rows(0, p.rows), fit.mean, fit.axes, m);
  std::vector<double> out = fit.mean;
  out.insert(out.end(), fit.axes.begin(), fit.axes.end());
  out.insert(out.end(), fit.variances.begin(), fit.variances.end());
  out.push_back(fit.kept_share);
  for (Eigen::Index i = 0; i < y.rows(); ++i)
    for (Eigen::Index k = 0; k < y.cols(); ++k) out.push_back(y(i, k));
  std::ofstream f(a[4], std::ios::binary);
  f.write(reinterpret_cast<const char*>(out.data()),
          static_cast<std::streamsize>(out.size() * sizeof(double)));
  if (!f) throw unfurl::IoError(a[4] + ": cannot write");
  return 0;
} catch (const std::exception& e) {
  std::cerr << "pca_probe: " << e.what() << '\n';
  return 65;
}
