// Exposes the quality stages to tests/reference/quality_check.py. File formats (little-endian):
//   points: uint64 rows, uint64 cols, rows*cols float32 (row-major)
//   rows:   uint64 rows, uint64 cols, rows uint32 sources, rows*cols float32 (DistanceRows)
//   pairs:  uint64 count, then count times (uint32 a, uint32 b, float64 distance)
// Commands (JSON on stdout; errors as one line on stderr, exit code from engine/error.hpp):
//   scores INPUT MAP K[,K...] exact|sampled|automatic SAMPLE SEED
//   intervals INPUT MAP K SAMPLE FIRST_SEED SEEDS   (one sampled run per seed, as JSON lines)
//   residual ROWS MAP        residual-pairs PAIRS MAP        dimension KNN K
#include <cstdint>
#include <cstdio>
#include <fstream>
#include <iostream>
#include <sstream>
#include <string>
#include <vector>

#include "apps/exit_codes.hpp"
#include "engine/detail/sampling.hpp"
#include "engine/error.hpp"
#include "engine/quality.hpp"
#include "engine/quality_dimension.hpp"
#include "engine/quality_residual.hpp"

namespace {

using namespace unfurl;

template <class T>
void read_into(std::ifstream& f, T* out, std::size_t count, const std::string& path) {
  f.read(reinterpret_cast<char*>(out), static_cast<std::streamsize>(count * sizeof(T)));
  if (!f) throw IoError(path + ": truncated");
}

PointSet read_points(const std::string& path) {
  std::ifstream f(path, std::ios::binary);
  if (!f) throw MissingInputError(path + ": cannot open");
  std::uint64_t shape[2];
  read_into(f, shape, 2, path);
  PointSet p(shape[0], shape[1]);
  read_into(f, p.values.data(), p.values.size(), path);
  return p;
}

DistanceRows read_rows(const std::string& path) {
  std::ifstream f(path, std::ios::binary);
  if (!f) throw MissingInputError(path + ": cannot open");
  std::uint64_t shape[2];
  read_into(f, shape, 2, path);
  DistanceRows r;
  r.rows = shape[0];
  r.cols = shape[1];
  r.sources.resize(r.rows);
  r.values.resize(r.rows * r.cols);
  read_into(f, r.sources.data(), r.rows, path);
  read_into(f, r.values.data(), r.values.size(), path);
  return r;
}

std::vector<PairDistance> read_pairs(const std::string& path) {
  std::ifstream f(path, std::ios::binary);
  if (!f) throw MissingInputError(path + ": cannot open");
  std::uint64_t count;
  read_into(f, &count, 1, path);
  std::vector<PairDistance> pairs(count);
  for (auto& p : pairs) {
    read_into(f, &p.a, 1, path);
    read_into(f, &p.b, 1, path);
    read_into(f, &p.distance, 1, path);
  }
  return pairs;
}

std::string num(double v) {
  char buf[40];
  std::snprintf(buf, sizeof buf, "%.17g", v);
  return buf;
}

std::string curve_json(const ResidualVarianceCurve& c) {
  std::string s = "{\"pairs\": " + std::to_string(c.pairs) + ", \"by_dims\": [";
  for (std::size_t d = 0; d < c.by_dims.size(); ++d) s += (d ? ", " : "") + num(c.by_dims[d]);
  return s + "]}";
}

int run(int argc, char** argv) {
  const std::string cmd = argc > 1 ? argv[1] : "";
  if (cmd == "scores" && argc == 8) {
    QualityOptions o;
    o.ks.clear();
    std::stringstream ks(argv[4]);
    for (std::string k; std::getline(ks, k, ',');) o.ks.push_back(std::stoul(k));
    const std::string method = argv[5];
    o.method = method == "exact"     ? ScoreMethod::exact
               : method == "sampled" ? ScoreMethod::sampled
                                     : ScoreMethod::automatic;
    o.sample = std::stoul(argv[6]);
    o.seed = std::stoull(argv[7]);
    const auto r = neighbourhood_scores(read_points(argv[2]), read_points(argv[3]), o);
    std::string s = "{\"method\": \"" + std::string(score_method_name(r.method)) +
                    "\", \"queries\": " + std::to_string(r.queries) + ", \"scores\": [";
    for (std::size_t i = 0; i < r.by_k.size(); ++i) {
      const auto& b = r.by_k[i];
      s += std::string(i ? ", " : "") + "{\"k\": " + std::to_string(b.k) +
           ", \"trustworthiness\": " + num(b.trustworthiness) +
           ", \"continuity\": " + num(b.continuity) +
           ", \"knn_preservation\": " + num(b.knn_preservation) + ", \"t_low\": " + num(b.t_low) +
           ", \"t_high\": " + num(b.t_high) + ", \"c_low\": " + num(b.c_low) +
           ", \"c_high\": " + num(b.c_high) + ", \"knn_low\": " + num(b.knn_low) +
           ", \"knn_high\": " + num(b.knn_high) + ", \"interval_method\": \"" + b.interval_method +
           "\"}";
    }
    std::cout << s << "]}\n";
    return 0;
  }
  if (cmd == "intervals" && argc == 8) {
    // One exact run, then for each seed the sampled path's own draw (detail::sample_rows)
    // and its own estimate step (detail::estimate_from_terms) on the drawn points' terms,
    // which are their exact terms (tests/engine/quality_test.cpp checks that).
    const PointSet input = read_points(argv[2]), map = read_points(argv[3]);
    QualityOptions o;
    o.ks = {std::stoul(argv[4])};
    o.method = ScoreMethod::exact;
    const std::size_t sample = std::stoul(argv[5]);
    const std::uint64_t first = std::stoull(argv[6]), seeds = std::stoull(argv[7]);
    const auto exact = neighbourhood_scores(input, map, o).by_k[0];
    for (std::uint64_t seed = first; seed < first + seeds; ++seed) {
      NeighbourhoodScore b;
      b.k = exact.k;
      b.sampled = true;
      b.sample_size = sample;
      b.scored_points = detail::sample_rows(input.rows, sample, seed);
      for (std::uint32_t row : b.scored_points) {
        b.t_terms.push_back(exact.t_terms[row]);
        b.c_terms.push_back(exact.c_terms[row]);
        b.knn_terms.push_back(exact.knn_terms[row]);
      }
      detail::estimate_from_terms(b, input.rows, seed);
      std::cout << "{\"seed\": " << seed << ", \"t\": " << num(b.trustworthiness)
                << ", \"t_low\": " << num(b.t_low) << ", \"t_high\": " << num(b.t_high)
                << ", \"c\": " << num(b.continuity) << ", \"c_low\": " << num(b.c_low)
                << ", \"c_high\": " << num(b.c_high) << ", \"knn\": " << num(b.knn_preservation)
                << ", \"knn_low\": " << num(b.knn_low) << ", \"knn_high\": " << num(b.knn_high)
                << "}\n";
    }
    return 0;
  }
  if (cmd == "residual" && argc == 4) {
    std::cout << curve_json(residual_variance(read_rows(argv[2]), read_points(argv[3]))) << "\n";
    return 0;
  }
  if (cmd == "residual-pairs" && argc == 4) {
    const auto pairs = read_pairs(argv[2]);
    std::cout << curve_json(residual_variance(pairs, read_points(argv[3]))) << "\n";
    return 0;
  }
  if (cmd == "dimension" && argc == 4) {
    const PointSet knn = read_points(argv[2]);
    const auto d = levina_bickel(knn.values, knn.rows, {.k = std::stoul(argv[3])});
    std::cout << "{\"estimate\": " << num(d.estimate) << ", \"used\": " << d.points_used
              << ", \"skipped\": " << d.points_skipped << "}\n";
    return 0;
  }
  throw OptionError("quality_probe: usage: scores|residual|residual-pairs|dimension ...");
}

}  // namespace

int main(int argc, char** argv) {
  try {
    return run(argc, argv);
  } catch (const unfurl::Error& e) {
    std::cerr << e.what() << "\n";
    return static_cast<int>(unfurl::app::exit_code_of(e));
  } catch (const std::exception& e) {
    std::cerr << "quality_probe: " << e.what() << "\n";
    return 70;
  }
}
