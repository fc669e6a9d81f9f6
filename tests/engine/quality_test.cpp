#include "engine/quality.hpp"

#include <atomic>
#include <catch2/catch.hpp>
#include <cmath>
#include <limits>

#include "engine/detail/sampling.hpp"
#include "engine/error.hpp"
#include "engine/neighbours.hpp"
#include "engine/quality_dimension.hpp"
#include "engine/quality_residual.hpp"
#include "engine/random.hpp"
#include "engine/synthetic.hpp"

namespace {

using namespace unfurl;

QualityOptions options_for(std::vector<std::size_t> ks, ScoreMethod method = ScoreMethod::exact,
                           std::size_t sample = 2000, std::uint64_t seed = 1) {
  QualityOptions o;
  o.ks = std::move(ks);
  o.method = method;
  o.sample = sample;
  o.seed = seed;
  return o;
}

PointSet line(std::initializer_list<float> xs) {
  PointSet p(xs.size(), 1);
  std::size_t i = 0;
  for (float x : xs) p.values[i++] = x;
  return p;
}

// Brute-force k nearest distances (self excluded by index), ascending per row.
std::vector<float> knn_distances(const PointSet& p, std::size_t k) {
  std::vector<float> out(p.rows * k);
  std::vector<double> row(p.rows);
  for (std::size_t i = 0; i < p.rows; ++i) {
    for (std::size_t j = 0; j < p.rows; ++j) {
      double s = 0;
      for (std::size_t c = 0; c < p.cols; ++c) {
        const double t = static_cast<double>(p.row(i)[c]) - p.row(j)[c];
        s += t * t;
      }
      row[j] = j == i ? std::numeric_limits<double>::infinity() : std::sqrt(s);
    }
    std::partial_sort(row.begin(), row.begin() + static_cast<std::ptrdiff_t>(k), row.end());
    for (std::size_t j = 0; j < k; ++j) out[i * k + j] = static_cast<float>(row[j]);
  }
  return out;
}

}  // namespace

TEST_CASE("a map identical to the input is perfectly trustworthy and continuous", "[quality]") {
  // Analytic: with the same neighbour order in both spaces U_k and V_k are empty, so
  // T = C = 1 (Venna and Kaski 2001, from the definition).
  const auto roll = swiss_roll(400, 5);
  const auto r = neighbourhood_scores(roll.points, roll.points, options_for({1, 7, 20}));
  REQUIRE(r.by_k.size() == 3);
  for (const auto& s : r.by_k) {
    CHECK(s.trustworthiness == 1.0);
    CHECK(s.continuity == 1.0);
    CHECK(s.knn_preservation == 1.0);
    CHECK_FALSE(s.sampled);
    CHECK(s.sample_size == 400);
    CHECK(s.t_low == s.trustworthiness);
    CHECK(s.c_high == s.continuity);
  }
  CHECK(r.method == ScoreMethod::exact);
}

TEST_CASE("two points swapped on a line, worked by hand", "[quality]") {
  // Input: x_i = 2^i, i = 0..5. From point i every point on its left is nearer than every
  // point on its right (2^i - 2^j < 2^i <= 2^j - 2^i), so i's input order is
  // i-1, i-2, ..., 0, i+1, ..., 5 with no ties. Map: the same positions with points 0 and 5
  // swapped, so the same rule applies to map positions. N = 6, k = 2 (< N/2).
  //   point  input 2-NN  map 2-NN  U (map not input), input ranks  V (input not map), map ranks
  //   0      {1, 2}      {4, 3}    4 -> 4, 3 -> 3: (4-2)+(3-2) = 3  1 -> 4, 2 -> 3: 3
  //   1      {0, 2}      {5, 2}    5 -> 5: 3                         0 -> 5: 3
  //   2      {1, 0}      {1, 5}    5 -> 5: 3                         0 -> 5: 3
  //   3      {2, 1}      {2, 1}    -                                 -
  //   4      {3, 2}      {3, 2}    -                                 -
  //   5      {4, 3}      {1, 2}    2 -> 3, 1 -> 4: 3                 3 -> 3, 4 -> 4: 3
  // Sum 12 each, so T = C = 1 - 2 / (6 * 2 * (12 - 6 - 1)) * 12 = 1 - 24/60 = 0.6.
  // Shared neighbours 0+1+1+2+2+0 = 6 of 12: kNN preservation 0.5. Per-point terms
  // 3 * 2 / (2 * 5) = 0.6 for points 0, 1, 2, 5 and 0 for 3, 4.
  const PointSet input = line({1, 2, 4, 8, 16, 32});
  const PointSet map = line({32, 2, 4, 8, 16, 1});
  const auto r = neighbourhood_scores(input, map, options_for({2}));
  const auto& s = r.by_k.at(0);
  CHECK(s.trustworthiness == Approx(0.6).margin(1e-15));
  CHECK(s.continuity == Approx(0.6).margin(1e-15));
  CHECK(s.knn_preservation == Approx(0.5).margin(1e-15));
  const std::vector<double> terms = {0.6, 0.6, 0.6, 0.0, 0.0, 0.6};
  REQUIRE(s.t_terms.size() == 6);
  for (std::size_t i = 0; i < 6; ++i) {
    CHECK(s.scored_points[i] == i);
    CHECK(s.t_terms[i] == Approx(terms[i]).margin(1e-15));
    CHECK(s.c_terms[i] == Approx(terms[i]).margin(1e-15));
  }
}

namespace {

// The unrolled Swiss roll (arc length, height) with Gaussian noise: a good but imperfect map.
PointSet noisy_truth(const SyntheticSet& s, double noise, std::uint64_t seed) {
  PointSet map = s.truth;
  Random rng(seed);
  for (float& v : map.values) v += static_cast<float>(noise * rng.normal());
  return map;
}

}  // namespace

TEST_CASE("sampled estimates cover the exact value at the stated 95% level", "[quality]") {
  // As the quality issue states the check: N = 20,000, the default 2,000 queries, a fixed seed
  // list (1..20), and the exact value inside the reported 95% interval for at least 19 of 20.
  const auto roll = swiss_roll(20000, 11);
  const PointSet map = noisy_truth(roll, 1.5, 12);
  const auto exact = neighbourhood_scores(roll.points, map, options_for({12}));
  const auto& e = exact.by_k[0];
  REQUIRE(e.trustworthiness < 0.999);  // an imperfect map, so the interval means something
  int t_inside = 0, c_inside = 0;
  for (std::uint64_t seed = 1; seed <= 20; ++seed) {  // fixed seed list 1..20
    const auto r =
        neighbourhood_scores(roll.points, map, options_for({12}, ScoreMethod::sampled, 2000, seed));
    const auto& s = r.by_k[0];
    REQUIRE(s.sampled);
    REQUIRE(s.sample_size == 2000);
    REQUIRE(s.t_low < s.trustworthiness);
    REQUIRE(s.trustworthiness < s.t_high);
    // Each sampled point is ranked exactly against all N: its terms are the exact ones.
    for (std::size_t q = 0; q < s.scored_points.size(); ++q) {
      REQUIRE(s.t_terms[q] == e.t_terms[s.scored_points[q]]);
      REQUIRE(s.c_terms[q] == e.c_terms[s.scored_points[q]]);
      REQUIRE(s.knn_terms[q] == e.knn_terms[s.scored_points[q]]);
    }
    // So the estimate step alone on the exact terms of the same draw gives the same figures
    // (what the coverage check in tests/reference/interval_check.py relies on).
    NeighbourhoodScore b;
    b.k = 12;
    b.sampled = true;
    b.scored_points = detail::sample_rows(20000, 2000, seed);
    REQUIRE(b.scored_points == s.scored_points);
    for (std::uint32_t row : b.scored_points) {
      b.t_terms.push_back(e.t_terms[row]);
      b.c_terms.push_back(e.c_terms[row]);
      b.knn_terms.push_back(e.knn_terms[row]);
    }
    detail::estimate_from_terms(b, 20000, seed);
    REQUIRE(b.t_low == s.t_low);
    REQUIRE(b.c_high == s.c_high);
    REQUIRE(b.knn_low == s.knn_low);
    t_inside += s.t_low <= e.trustworthiness && e.trustworthiness <= s.t_high;
    c_inside += s.c_low <= e.continuity && e.continuity <= s.c_high;
  }
  // Binomial(20, 0.95) (common practice, no source): a correct 95% interval reaches 19 of 20
  // with probability 0.74, so this bar can fail for a sound interval and another seed list;
  // for this fixed list it is deterministic. Observed with the earlier normal interval: T 19,
  // C 20 of 20 (the N = 10,000 version with 500 queries gave T 18, C 19: fewer queries cover
  // skewed terms less well, which tests/reference/interval_check.py now checks in earnest).
  CHECK(t_inside >= 19);
  CHECK(c_inside >= 19);

  // The interval procedure itself on 200 seeded draws of the engine's sampler from the exact
  // per-point terms. The betting interval's coverage is at least 95% for any population in
  // [0, 1] (Waudby-Smith and Ramdas, JRSS B 2024, from Ville's inequality): the observed share
  // must not fall below 95% by more than 3 binomial standard deviations
  // (sqrt(0.95 * 0.05 / 200) = 1.5%; common practice, no source).
  int covered = 0;
  const int draws = 200;
  std::vector<double> terms(2000);
  for (int seed = 0; seed < draws; ++seed) {
    const auto rows = detail::sample_rows(20000, 2000, 1000 + seed);
    for (std::size_t q = 0; q < rows.size(); ++q) terms[q] = e.t_terms[rows[q]];
    const auto m = detail::mean_interval(terms, 20000, seed);
    REQUIRE(m.low < m.high);
    covered += m.low <= 1.0 - e.trustworthiness && 1.0 - e.trustworthiness <= m.high;
  }
  CHECK(covered / double(draws) >= 0.95 - 3 * 0.0154);
}

TEST_CASE("the sampled interval covers when a few points carry the error", "[quality]") {
  // A population of 5,000 terms in [0, 1]: 10 at 0.9 (misplaced points), the rest 0 or 0.01.
  // At n = 200 about two samples in three contain no heavy term ((1 - 10/5000)^200 = 0.67),
  // so an interval from the sample's spread alone misses the mean in those draws. The betting
  // interval uses the bound 1 on every term: coverage at least 95% by Ville's inequality
  // (Waudby-Smith and Ramdas, JRSS B 2024); bar 93% as the quality issue states it.
  std::vector<double> population(5000);
  for (std::size_t i = 0; i < population.size(); ++i)
    population[i] = i % 37 == 0 ? 0.9 * (i / 37 < 10) + 0.01 * (i / 37 >= 10) : 0.0;
  double mean = 0;
  for (double t : population) mean += t;
  mean /= 5000;
  for (std::size_t n : {50, 200}) {
    int covered = 0, seen_heavy = 0;
    std::vector<double> terms(n);
    for (int seed = 1; seed <= 200; ++seed) {
      const auto rows = detail::sample_rows(5000, n, seed);
      bool heavy = false;
      for (std::size_t q = 0; q < n; ++q) {
        terms[q] = population[rows[q]];
        heavy = heavy || terms[q] > 0.5;
      }
      seen_heavy += heavy;
      const auto m = detail::mean_interval(terms, 5000, seed);
      REQUIRE(m.low < m.high);  // never zero width while n < N
      REQUIRE(m.low <= m.mean);
      REQUIRE(m.mean <= m.high);
      covered += m.low <= mean && mean <= m.high;
    }
    INFO("n = " << n << ": samples with a heavy term " << seen_heavy << " of 200");
    CHECK(seen_heavy < 140);  // the case is the one meant: most samples see no heavy term
    CHECK(covered >= 186);    // 93% of 200
  }
  // The whole population: the exact mean, zero width.
  const auto all = detail::mean_interval(population, 5000, 1);
  CHECK(all.low == all.mean);
  CHECK(all.high == all.mean);
  CHECK(all.mean == Approx(mean).epsilon(1e-12));
}

TEST_CASE("sampled scores do not depend on the thread count", "[quality]") {
  // Common practice, no source: the same seed must give the same numbers on any machine.
  const auto roll = swiss_roll(3000, 2);
  const PointSet map = noisy_truth(roll, 2.0, 3);
  auto o = options_for({5, 12}, ScoreMethod::sampled, 300, 9);
  o.threads = 1;
  const auto one = neighbourhood_scores(roll.points, map, o);
  o.threads = 2;
  const auto two = neighbourhood_scores(roll.points, map, o);
  for (std::size_t i = 0; i < 2; ++i) {
    CHECK(one.by_k[i].scored_points == two.by_k[i].scored_points);
    CHECK(one.by_k[i].t_terms == two.by_k[i].t_terms);
    CHECK(one.by_k[i].c_terms == two.by_k[i].c_terms);
    CHECK(one.by_k[i].trustworthiness == two.by_k[i].trustworthiness);
  }
  // A different seed draws different query points.
  o.seed = 10;
  CHECK(neighbourhood_scores(roll.points, map, o).by_k[0].scored_points !=
        one.by_k[0].scored_points);
}

TEST_CASE("automatic scoring switches to a sample above the exact limit", "[quality]") {
  const auto roll = swiss_roll(500, 4);
  auto o = options_for({5}, ScoreMethod::automatic, 100);
  o.exact_limit = 499;
  const auto r = neighbourhood_scores(roll.points, roll.truth, o);
  CHECK(r.method == ScoreMethod::sampled);
  CHECK(r.by_k[0].scored_points.size() == 100);
  o.exact_limit = 500;
  CHECK(neighbourhood_scores(roll.points, roll.truth, o).method == ScoreMethod::exact);
}

TEST_CASE("duplicates are neighbours, the point itself is excluded by index", "[quality]") {
  // Worked by hand. Input on a line: points 0, 1 at 0 (twins), 2 at 10, 3 at 30. Map: 0 at 0,
  // 1 at 10, 2 at 0, 3 at 30, so the map separates the twins and puts 2 on top of 0.
  // k = 1 (< N/2 = 2). Input 1-NN: 0 -> 1 and 1 -> 0 (the twin at distance 0, whichever
  // comes first in the row), 2 -> 0 (0 and 1 tie at 10: lower index), 3 -> 2.
  // Map 1-NN: 0 -> 2 (distance 0), 1 -> 0 (0 and 2 tie at 10: lower index), 2 -> 0, 3 -> 1
  // (1 at 20 is nearer than 0 and 2 at 30).
  // Input orders: 0: 1, 2, 3; 1: 0, 2, 3; 2: 0, 1 (tie at 10), 3; 3: 2, 0, 1 (tie at 30).
  // Map orders:   0: 2, 1, 3; 1: 0, 2 (tie at 10), 3; 2: 0, 1, 3; 3: 1, 0, 2 (tie at 30).
  // T: point 0's map neighbour 2 has input rank 2, term 2 - 1 = 1; point 3's map neighbour 1
  // has input rank 3, term 2. Sum 3: T = 1 - 2/(4 * 1 * (8 - 3 - 1)) * 3 = 1 - 6/16 = 0.625.
  // C: point 0's input neighbour 1 has map rank 2, term 1; point 3's input neighbour 2 has map
  // rank 3, term 2. Sum 3: C = 0.625. Points 1 and 2 keep their neighbour: preservation 0.5.
  const PointSet input = line({0, 0, 10, 30});
  const PointSet map = line({0, 10, 0, 30});
  const auto r = neighbourhood_scores(input, map, options_for({1}));
  const auto& s = r.by_k.at(0);
  CHECK(s.trustworthiness == Approx(0.625).margin(1e-15));
  CHECK(s.continuity == Approx(0.625).margin(1e-15));
  CHECK(s.knn_preservation == Approx(0.5).margin(1e-15));
  // Per-point terms 2/(1 * 4) * sum: points 0 and 3 only.
  CHECK(s.t_terms == std::vector<double>{0.5, 0.0, 0.0, 1.0});
  CHECK(s.c_terms == std::vector<double>{0.5, 0.0, 0.0, 1.0});
}

TEST_CASE("residual variance vanishes for an isometric 2-D map", "[quality]") {
  // Analytic ground truth: points on a plane in R^3, mapped by their plane coordinates, keep
  // every distance, so R = 1 with two axes. The first axis alone explains less.
  Random rng(8);
  const std::size_t n = 300;
  PointSet plane(n, 3), map(n, 2);
  const double u[3] = {0.6, 0.8, 0.0}, v[3] = {0.0, 0.0, 1.0};  // orthonormal
  for (std::size_t i = 0; i < n; ++i) {
    const double a = 10 * rng.uniform(), b = 4 * rng.uniform();
    for (int c = 0; c < 3; ++c) plane.row(i)[c] = static_cast<float>(a * u[c] + b * v[c] + 1.0);
    map.row(i)[0] = static_cast<float>(a);
    map.row(i)[1] = static_cast<float>(b);
  }
  DistanceRows rows;
  rows.rows = 5;
  rows.cols = n;
  for (NodeId s : {0u, 17u, 99u, 150u, 299u}) {
    rows.sources.push_back(s);
    for (std::size_t j = 0; j < n; ++j) {
      double d2 = 0;
      for (int c = 0; c < 3; ++c) {
        const double t = static_cast<double>(plane.row(s)[c]) - plane.row(j)[c];
        d2 += t * t;
      }
      rows.values.push_back(static_cast<float>(std::sqrt(d2)));
    }
  }
  const auto curve = residual_variance(rows, map);
  REQUIRE(curve.by_dims.size() == 2);
  CHECK(curve.pairs == 5 * (n - 1));
  CHECK_FALSE(curve.sampled);
  CHECK(curve.by_dims[1] < 1e-6);  // float32 coordinates: rounding only
  CHECK(curve.by_dims[0] > 0.01);
  // The same from a seeded sample of pairs with input-space distances.
  const auto pairs = sample_pair_distances(plane, {.count = 5000, .seed = 3});
  const auto sampled = residual_variance(pairs, map);
  CHECK(sampled.sampled);
  CHECK(sampled.pairs == 5000);
  CHECK(sampled.by_dims[1] < 1e-6);
}

TEST_CASE("residual variance matches a hand computation on three points", "[quality]") {
  // Map 1-D at 0, 1, 3; rows from sources 0 and 2 with given distances (0, 1, 2) and (2, 2, 0).
  // Pairs (0,1) (0,2) (2,0) (2,1): given x = 1, 2, 2, 2; map y = 1, 3, 3, 2.
  // Means 7/4, 9/4; centred x = -3/4, 1/4, 1/4, 1/4; y = -5/4, 3/4, 3/4, -1/4.
  // Sxy = 15/16 + 3/16 + 3/16 - 1/16 = 20/16, Sxx = 12/16, Syy = 44/16.
  // R^2 = (20/16)^2 / (12/16 * 44/16) = 400/528 = 25/33, so 1 - R^2 = 8/33.
  const PointSet map = line({0, 1, 3});
  DistanceRows rows{2, 3, {0, 2}, {0, 1, 2, 2, 2, 0}};
  const auto curve = residual_variance(rows, map);
  CHECK(curve.pairs == 4);
  CHECK(curve.by_dims.at(0) == Approx(8.0 / 33.0).margin(1e-12));
}

TEST_CASE("Levina-Bickel recovers the dimension of a plane and of a Gaussian", "[quality]") {
  // Ground truth: a 2-D square linearly embedded in 10-D has dimension 2; a standard 5-D
  // Gaussian has dimension 5. Tolerances: each point's inverse estimate is (1/m) times a
  // Gamma(k-1)/(k-1) variable (Levina and Bickel 2004, the Poisson approximation behind the
  // estimator), relative sd 1/sqrt(k-1); over N = 2000 overlapping neighbourhoods the mean has
  // a relative sd of about 1-2%. Boundary points of the square and the density gradient of the
  // Gaussian bias the estimate by a few per cent (measured here on three seeds: plane 1.93 to
  // 1.98, Gaussian 4.98 to 5.09 for k = 10 and 20). Tolerances 0.15 (7.5%) and 0.3 (6%).
  Random rng(1);
  PointSet plane(2000, 10);
  std::vector<double> a(20);
  for (double& v : a) v = rng.normal();
  for (std::size_t i = 0; i < plane.rows; ++i) {
    const double u = rng.uniform(), v = rng.uniform();
    for (std::size_t c = 0; c < 10; ++c)
      plane.row(i)[c] = static_cast<float>(a[c] * u + a[10 + c] * v);
  }
  PointSet gauss(2000, 5);
  for (float& v : gauss.values) v = static_cast<float>(rng.normal());
  const std::size_t k = 10;
  const auto p = levina_bickel(knn_distances(plane, k), plane.rows, {.k = k});
  CHECK(p.estimate == Approx(2.0).margin(0.15));
  CHECK(p.points_used == 2000);
  CHECK(p.averaging == "inverse");
  const auto g = levina_bickel(knn_distances(gauss, k), gauss.rows, {.k = k});
  CHECK(g.estimate == Approx(5.0).margin(0.3));
}

TEST_CASE("Levina-Bickel skips points with duplicates", "[quality]") {
  // Point 1 has a twin (distance 0): log(T_k / 0) is infinite, so the point is left out.
  // The other rows give inverses log(4/1)/2 + log(4/2)/2 = 1.5 log 2 each (k = 3).
  const std::vector<float> d = {1, 2, 4, 0, 2, 4, 1, 2, 4};
  const auto r = levina_bickel(d, 3, {.k = 3});
  CHECK(r.points_used == 2);
  CHECK(r.points_skipped == 1);
  CHECK(r.estimate == Approx(1.0 / (1.5 * std::log(2.0))).epsilon(1e-12));
  CHECK(r.warnings.size() == 1);
}

TEST_CASE("the intrinsic dimension is taken on distinct points", "[quality]") {
  // A square's points, 90% of the rows repeating earlier ones: on merged points the estimate
  // must equal Levina-Bickel on the distinct rows alone (the formula on brute-force
  // distances, knn_distances above), and the graph stage's kNN lists must give the same
  // number without a second search.
  Random rng(3);
  PointSet distinct(300, 2);
  for (float& v : distinct.values) v = static_cast<float>(rng.uniform());
  PointSet rows(3000, 2);
  for (std::size_t i = 0; i < rows.rows; ++i) {
    const std::size_t from = i < 300 ? i : rng.below(300);
    std::copy_n(distinct.row(from), 2, rows.row(i));
  }
  const std::size_t k = 10;
  const auto truth = levina_bickel(knn_distances(distinct, k), distinct.rows, {.k = k});
  const auto merged = intrinsic_dimension(rows, {.k = k});
  CHECK(merged.estimate == Approx(truth.estimate).epsilon(1e-12));
  CHECK(merged.points_used == 300);
  CHECK(merged.points == "distinct");
  GraphOptions go;
  go.neighbourhood = NearestK{k};
  const GraphResult graph = build_neighbour_graph(rows, go);
  REQUIRE(graph.dimension.has_value());
  CHECK(graph.dimension->estimate == Approx(truth.estimate).epsilon(1e-12));
  CHECK(graph.dimension->points_used == 300);
  // Too few distinct points for k: k is lowered, with a warning; below 3 there is no estimate.
  const auto small = intrinsic_dimension(rows, {.k = 400});
  CHECK(small.k == 299);
  CHECK(small.warnings.size() == 1);
  PointSet two(10, 2);
  for (std::size_t i = 0; i < 10; ++i) two.row(i)[0] = static_cast<float>(i % 2);
  CHECK_THROWS_WITH(intrinsic_dimension(two, {.k = 5}), Catch::Contains("3 distinct points"));
}

TEST_CASE("quality stages refuse bad input with a message naming the fault", "[quality]") {
  const auto roll = swiss_roll(40, 1);
  PointSet short_map(39, 2);
  CHECK_THROWS_AS(neighbourhood_scores(roll.points, short_map, options_for({3})), DataError);
  CHECK_THROWS_WITH(neighbourhood_scores(roll.points, roll.truth, options_for({20})),
                    Catch::Contains("QualityOptions.ks") && Catch::Contains("got 20"));
  CHECK_THROWS_AS(neighbourhood_scores(roll.points, roll.truth, options_for({20})), OptionError);
  CHECK_NOTHROW(neighbourhood_scores(roll.points, roll.truth, options_for({19})));
  CHECK_THROWS_AS(neighbourhood_scores(roll.points, roll.truth, options_for({0})), OptionError);
  CHECK_THROWS_AS(neighbourhood_scores(roll.points, roll.truth, options_for({})), OptionError);
  CHECK_THROWS_WITH(
      neighbourhood_scores(roll.points, roll.truth, options_for({3}, ScoreMethod::sampled, 1)),
      Catch::Contains("QualityOptions.sample"));
  PointSet bad = roll.truth;
  bad.row(13)[1] = std::numeric_limits<float>::quiet_NaN();
  CHECK_THROWS_WITH(neighbourhood_scores(roll.points, bad, options_for({3})),
                    Catch::Contains("map") && Catch::Contains("row 13"));
  bad.row(13)[1] = std::numeric_limits<float>::infinity();
  CHECK_THROWS_AS(neighbourhood_scores(roll.points, bad, options_for({3})), DataError);
  CHECK_THROWS_AS(neighbourhood_scores(PointSet{}, PointSet{}, options_for({3})), DataError);

  // Residual variance: wrong shape, and a NaN found inside the parallel loop (rethrown).
  DistanceRows rows{1, 39, {0}, RowValues(39, 1.0f)};
  CHECK_THROWS_AS(residual_variance(rows, roll.truth), DataError);
  DistanceRows nan_rows{2, 40, {0, 5}, RowValues(80, 1.0f)};
  nan_rows.values[40 + 7] = std::numeric_limits<float>::quiet_NaN();
  CHECK_THROWS_WITH(residual_variance(nan_rows, roll.truth),
                    Catch::Contains("row 1") && Catch::Contains("column 7"));
  CHECK_THROWS_AS(sample_pair_distances(roll.points, {.count = 0, .seed = 1}), OptionError);

  // Levina-Bickel: k < 2, wrong size, a descending row.
  CHECK_THROWS_AS(levina_bickel(std::vector<float>(40, 1.0f), 40, {.k = 1}), OptionError);
  CHECK_THROWS_AS(levina_bickel(std::vector<float>(41, 1.0f), 20, {.k = 2}), DataError);
  CHECK_THROWS_WITH(levina_bickel(std::vector<float>{1, 2, 3, 2}, 2, {.k = 2}),
                    Catch::Contains("row 1"));
}

TEST_CASE("quality scoring stops on request", "[quality]") {
  const auto roll = swiss_roll(200, 1);
  std::atomic<bool> flag{true};
  CHECK_THROWS_AS(neighbourhood_scores(roll.points, roll.truth, options_for({5}), StopToken{&flag}),
                  InterruptedError);
  DistanceRows rows{1, 200, {0}, RowValues(200, 1.0f)};
  CHECK_THROWS_AS(residual_variance(rows, roll.truth, StopToken{&flag}), InterruptedError);
}
