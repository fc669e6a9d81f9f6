#include "engine/quality.hpp"

#include <omp.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <optional>
#include <span>
#include <string>

#include "engine/detail/neighbour_scan.hpp"
#include "engine/detail/point_checks.hpp"
#include "engine/detail/rank_products.hpp"
#include "engine/detail/rank_tree.hpp"
#include "engine/detail/sampling.hpp"
#include "engine/error.hpp"
#include "engine/parallel.hpp"

namespace unfurl {

const char* score_method_name(ScoreMethod method) {
  switch (method) {
    case ScoreMethod::automatic:
      return "automatic";
    case ScoreMethod::exact:
      return "exact";
    case ScoreMethod::sampled:
      return "sampled";
  }
  return "unknown";
}

std::size_t default_score_k(std::size_t n) {
  return n < 3 ? 0 : std::min<std::size_t>(12, (n - 1) / 2);
}

void QualityOptions::validate(std::size_t n) const {
  if (ks.empty()) throw OptionError("QualityOptions.ks", "give at least one neighbourhood size");
  for (std::size_t k : ks) {
    if (k < 1) throw OptionError("QualityOptions.ks", "must be at least 1, got 0");
    // 2k < N is k < N/2 without rounding; T and C leave [0, 1] beyond it.
    if (2 * k >= n)
      throw OptionError("QualityOptions.ks", "must be less than N/2 = " + std::to_string(n / 2) +
                                                 (n % 2 ? ".5" : "") + " for " + std::to_string(n) +
                                                 " points, got " + std::to_string(k));
  }
  if (sample < 2)
    throw OptionError("QualityOptions.sample",
                      "must be at least 2 query points, got " + std::to_string(sample));
  if (threads < 0)
    throw OptionError("QualityOptions.threads",
                      "must be 0 (all) or more, got " + std::to_string(threads));
  if (method == ScoreMethod::automatic && exact_limit < 1)
    throw OptionError("QualityOptions.exact_limit", "must be at least 1, got 0");
}

namespace {

using detail::Ranked;

// Largest dimension of either space for which the scores count in k-d trees, which pay when N
// is much larger than 2^d (common practice, no source). Not tuned: measured only on a 3-D
// input with a 2-D map (bench/RESULTS.md, lane scores).
constexpr std::size_t kTreeMaxDims = 4;

// Where id sits in a sorted candidate list, or npos.
constexpr std::size_t npos = static_cast<std::size_t>(-1);
std::size_t position_of(const std::vector<Ranked>& list, NodeId id) {
  for (std::size_t p = 0; p < list.size(); ++p)
    if (list[p].id == id) return p;
  return npos;
}

// Per-thread working memory.
struct Workspace {
  std::vector<double> q_in, q_map;  // block x dims
  std::vector<float> columns;
  std::vector<double> row;
  std::vector<std::vector<Ranked>> cand_in, cand_map;  // per query, sorted candidates
  std::vector<Ranked> tree_in, tree_map;               // one query's lists from the trees
  std::vector<detail::NearestList> lists;              // a group of queries' direct scan
  std::vector<double> dist2;                           // group x chunk
  std::vector<std::vector<NodeId>> others;             // per query, the ids ranked by products
  std::vector<double> q_pending;                       // queries that need a counting pass
  std::vector<NodeId> pending_self;
  std::vector<std::size_t> pending_query;
  std::vector<std::vector<Ranked>> thresholds;
  std::vector<std::vector<std::size_t>> counted;
};

// ranks[b][p]: for the p-th (p < kmax) neighbour of query b in `from`, its 1-based rank in the
// other space: read from the other space's candidates when it is there, else counted against
// all points in one pass shared by the block.
void ranks_in_other_space(const detail::DistanceScanner& other, const double* queries,
                          std::span<const std::uint32_t> selves,
                          const std::vector<std::vector<Ranked>>& from,
                          const std::vector<std::vector<Ranked>>& other_lists, std::size_t kmax,
                          Workspace& ws, std::vector<std::vector<std::size_t>>& ranks) {
  const std::size_t count = selves.size();
  const std::size_t dims = other.dims();
  ranks.resize(count);
  ws.q_pending.clear();
  ws.pending_self.clear();
  ws.pending_query.clear();
  ws.thresholds.resize(count);
  std::size_t pending = 0;
  for (std::size_t b = 0; b < count; ++b) {
    ranks[b].assign(kmax, 0);
    std::vector<Ranked>& missing = ws.thresholds[pending];
    missing.clear();
    const double* q = queries + b * dims;
    for (std::size_t p = 0; p < kmax; ++p) {
      const NodeId j = from[b][p].id;
      const std::size_t pos = position_of(other_lists[b], j);
      if (pos != npos) {
        ranks[b][p] = pos + 1;
      } else {
        // The same code path as the scan, so the point is never counted below itself.
        double dist2 = 0;
        other.distances(q, 1, j, j + 1, ws.columns, &dist2);
        missing.push_back({dist2, j});
      }
    }
    if (missing.empty()) continue;
    std::sort(missing.begin(), missing.end(), detail::Before{});
    ws.q_pending.insert(ws.q_pending.end(), q, q + dims);
    ws.pending_self.push_back(static_cast<NodeId>(selves[b]));
    ws.pending_query.push_back(b);
    ++pending;
  }
  if (pending == 0) return;
  detail::ranks_of(other, ws.q_pending.data(), pending, ws.pending_self,
                   std::span(ws.thresholds.data(), pending), ws.columns, ws.row, ws.counted);
  for (std::size_t i = 0; i < pending; ++i) {
    const std::size_t b = ws.pending_query[i];
    const std::vector<Ranked>& t = ws.thresholds[i];
    for (std::size_t p = 0; p < kmax; ++p) {
      if (ranks[b][p] != 0) continue;
      const NodeId j = from[b][p].id;
      for (std::size_t s = 0; s < t.size(); ++s)
        if (t[s].id == j) ranks[b][p] = ws.counted[i][s];
    }
  }
}

// cand[b]: the kc first neighbours of query b (row selves[b], coordinates q + b * dims) in
// `scan`'s space, in ranking order, by the direct double scan, eight queries at a time.
void direct_candidates(const detail::DistanceScanner& scan, const double* q,
                       std::span<const std::uint32_t> selves, std::size_t kc, Workspace& ws,
                       std::vector<std::vector<Ranked>>& cand) {
  std::vector<detail::NearestList>& lists = ws.lists;
  std::vector<double>& dist2 = ws.dist2;
  constexpr std::size_t kGroup = 8;
  const std::size_t n = scan.rows(), dims = scan.dims(), chunk = scan.chunk();
  cand.resize(std::max(cand.size(), selves.size()));
  lists.resize(kGroup);
  dist2.resize(kGroup * chunk);
  for (std::size_t g0 = 0; g0 < selves.size(); g0 += kGroup) {
    const std::size_t count = std::min(kGroup, selves.size() - g0);
    for (std::size_t b = 0; b < count; ++b) lists[b].reset(kc);
    for (std::size_t begin = 0; begin < n; begin += chunk) {
      const std::size_t end = std::min(n, begin + chunk);
      scan.distances(q + g0 * dims, count, begin, end, ws.columns, dist2.data());
      for (std::size_t b = 0; b < count; ++b)
        lists[b].offer_range(dist2.data() + b * chunk, begin, end, selves[g0 + b]);
    }
    for (std::size_t b = 0; b < count; ++b) lists[b].take_sorted(cand[g0 + b]);
  }
}

// Both spaces by k-d trees: each query's kmax first neighbours in either space, and the rank
// of each in the other (read from the other's list when it is there, else counted).
void tree_ranks(const detail::RankTree& tree_in, const detail::RankTree& tree_map,
                std::span<const std::uint32_t> selves, std::size_t kmax, Workspace& ws,
                std::vector<std::vector<std::size_t>>& rank_in,
                std::vector<std::vector<std::size_t>>& rank_map) {
  rank_in.resize(selves.size());
  rank_map.resize(selves.size());
  std::vector<Ranked>& near_in = ws.tree_in;
  std::vector<Ranked>& near_map = ws.tree_map;
  for (std::size_t b = 0; b < selves.size(); ++b) {
    const std::size_t self = selves[b];
    tree_in.nearest(self, kmax, near_in);
    tree_map.nearest(self, kmax, near_map);
    rank_in[b].resize(kmax);
    rank_map[b].resize(kmax);
    for (std::size_t p = 0; p < kmax; ++p) {
      const std::size_t at_in = position_of(near_in, near_map[p].id);
      rank_in[b][p] = at_in != npos ? at_in + 1 : tree_in.rank(self, near_map[p].id);
      const std::size_t at_map = position_of(near_map, near_in[p].id);
      rank_map[b][p] = at_map != npos ? at_map + 1 : tree_map.rank(self, near_in[p].id);
    }
  }
}

}  // namespace

void detail::estimate_from_terms(NeighbourhoodScore& s, std::size_t n, std::uint64_t seed) {
  // The bets' order comes from the sample's seed, but not from the same stream.
  const std::uint64_t order_seed = seed ^ 0x9e3779b97f4a7c15ULL;
  // Exact scoring has no sampling error: mean_interval gives low == high when all n are scored.
  const auto t_est = detail::mean_interval(s.t_terms, n, order_seed);
  const auto c_est = detail::mean_interval(s.c_terms, n, order_seed);
  const auto knn_est = detail::mean_interval(s.knn_terms, n, order_seed);
  s.trustworthiness = 1.0 - t_est.mean;
  s.continuity = 1.0 - c_est.mean;
  s.knn_preservation = knn_est.mean;
  s.t_low = 1.0 - t_est.high;
  s.t_high = 1.0 - t_est.low;
  s.c_low = 1.0 - c_est.high;
  s.c_high = 1.0 - c_est.low;
  s.knn_low = knn_est.low;
  s.knn_high = knn_est.high;
  s.interval_method = s.sampled ? detail::kIntervalMethod : "exact";
}

NeighbourhoodScores neighbourhood_scores(const PointSet& input, const PointSet& map,
                                         const QualityOptions& options, StopToken stop) {
  return detail::neighbourhood_scores(input, map, options, true, stop);
}

NeighbourhoodScores detail::neighbourhood_scores(const PointSet& input, const PointSet& map,
                                                 const QualityOptions& options, bool use_fast,
                                                 StopToken stop) {
  const auto start = std::chrono::steady_clock::now();
  detail::require_points(input, "quality input points");
  detail::require_points(map, "quality map");
  if (input.rows != map.rows)
    throw DataError("quality: the map has " + std::to_string(map.rows) +
                    " rows but the input points have " + std::to_string(input.rows));
  const std::size_t n = input.rows;
  if (n >= (std::size_t{1} << 31))
    throw DataError("quality: " + std::to_string(n) + " points exceed the 2^31 row limit");
  options.validate(n);

  NeighbourhoodScores out;
  out.points = n;
  const bool sampled =
      options.sample < n && (options.method == ScoreMethod::sampled ||
                             (options.method == ScoreMethod::automatic && n > options.exact_limit));
  out.method = sampled ? ScoreMethod::sampled : ScoreMethod::exact;
  std::vector<std::uint32_t> queries;
  if (sampled) {
    queries = detail::sample_rows(n, options.sample, options.seed);
  } else {
    queries.resize(n);
    for (std::size_t i = 0; i < n; ++i) queries[i] = static_cast<std::uint32_t>(i);
    if (options.method == ScoreMethod::sampled)
      out.warnings.push_back("quality: sample of " + std::to_string(options.sample) +
                             " is not smaller than N = " + std::to_string(n) + "; scored exactly");
  }
  const std::size_t nq = queries.size();
  const std::size_t nk = options.ks.size();
  const std::size_t kmax = *std::max_element(options.ks.begin(), options.ks.end());
  // Candidates beyond kmax make most ranks of misplaced neighbours free; only those farther
  // out need a counting pass (a second scan of all points). Keeping more candidates costs
  // about kc (1 + ln(N / kc)) insertions per query, small against the N-point scan while
  // kc <= N / 256.
  const std::size_t kc =
      std::min(n - 1, std::max({8 * kmax, kmax + 96, std::min<std::size_t>(n / 256, 1024)}));

  std::vector<std::uint64_t> t_sum(nq * nk), c_sum(nq * nk);
  std::vector<std::uint32_t> shared(nq * nk);

  stop.expect(nq);
  // In a few dimensions both spaces are counted in k-d trees; in many input dimensions the
  // input-space ranks come from float32 products with every doubtful rank settled exactly;
  // otherwise the direct scan. All three give the same ranks.
  const bool trees = use_fast && input.cols <= kTreeMaxDims && map.cols <= kTreeMaxDims;
  const bool products = use_fast && !trees && detail::products_serve(input);
  std::optional<detail::RankTree> tree_in, tree_map;
  std::optional<detail::DistanceScanner> scan_in, scan_map;
  std::optional<detail::ProductRanker> ranker;
  const int threads = resolve_threads(options.threads);
  if (trees) {
    ExceptionCollector built;
#pragma omp parallel sections num_threads(std::min(threads, 2))
    {
#pragma omp section
      built.run([&] { tree_in.emplace(input); });
#pragma omp section
      built.run([&] { tree_map.emplace(map); });
    }
    built.rethrow();
  } else {
    if (products)
      ranker.emplace(input);
    else
      scan_in.emplace(input);
    scan_map.emplace(map);
  }
  // Products want many queries per pass over the points; the direct scan keeps its blocks of
  // eight in cache.
  const std::size_t block = products || trees ? 64 : 8;
  const std::size_t blocks = (nq + block - 1) / block;
  const std::size_t d = input.cols, m = map.cols;
  out.threads = threads;
  ExceptionCollector errors;

#pragma omp parallel num_threads(threads)
  {
    Workspace ws;
    std::vector<std::vector<std::size_t>> rank_in, rank_map;
#pragma omp for schedule(dynamic)
    for (std::size_t blk = 0; blk < blocks; ++blk) {
      errors.run([&] {
        if (errors.failed()) return;
        stop.check("quality");
        const std::size_t q0 = blk * block;
        const std::size_t count = std::min(block, nq - q0);
        const std::span<const std::uint32_t> selves(queries.data() + q0, count);
        if (trees) {
          tree_ranks(*tree_in, *tree_map, selves, kmax, ws, rank_in, rank_map);
        } else {
          ws.q_map.resize(count * m);
          for (std::size_t b = 0; b < count; ++b)
            scan_map->load_query(queries[q0 + b], ws.q_map.data() + b * m);
          direct_candidates(*scan_map, ws.q_map.data(), selves, kc, ws, ws.cand_map);
          if (products) {
            ws.others.resize(count);
            for (std::size_t b = 0; b < count; ++b) {
              ws.others[b].clear();
              for (std::size_t p = 0; p < kmax; ++p) ws.others[b].push_back(ws.cand_map[b][p].id);
            }
            ranker->rank(selves, kmax, std::span(ws.others.data(), count), ws.cand_in, rank_in);
          } else {
            ws.q_in.resize(count * d);
            for (std::size_t b = 0; b < count; ++b)
              scan_in->load_query(queries[q0 + b], ws.q_in.data() + b * d);
            direct_candidates(*scan_in, ws.q_in.data(), selves, kc, ws, ws.cand_in);
            ranks_in_other_space(*scan_in, ws.q_in.data(), selves, ws.cand_map, ws.cand_in, kmax,
                                 ws, rank_in);
          }
          ranks_in_other_space(*scan_map, ws.q_map.data(), selves, ws.cand_in, ws.cand_map, kmax,
                               ws, rank_map);
        }
        for (std::size_t b = 0; b < count; ++b) {
          const std::size_t q = q0 + b;
          for (std::size_t kk = 0; kk < nk; ++kk) {
            const std::size_t k = options.ks[kk];
            std::uint64_t t = 0, c = 0;
            std::uint32_t both = 0;
            for (std::size_t p = 0; p < k; ++p) {
              // rank_in[p]: input rank of the p-th map neighbour; beyond k it is in U_k.
              if (rank_in[b][p] > k)
                t += rank_in[b][p] - k;
              else
                ++both;
              if (rank_map[b][p] > k) c += rank_map[b][p] - k;
            }
            t_sum[q * nk + kk] = t;
            c_sum[q * nk + kk] = c;
            shared[q * nk + kk] = both;
          }
        }
        stop.advance(count);
      });
    }
  }
  errors.rethrow();

  for (std::size_t kk = 0; kk < nk; ++kk) {
    const std::size_t k = options.ks[kk];
    NeighbourhoodScore s;
    s.k = k;
    s.sampled = sampled;
    s.sample_size = nq;
    s.scored_points = queries;
    s.t_terms.resize(nq);
    s.c_terms.resize(nq);
    const double scale = 2.0 / (static_cast<double>(k) * (2.0 * n - 3.0 * k - 1.0));
    for (std::size_t q = 0; q < nq; ++q) {
      s.t_terms[q] = static_cast<double>(t_sum[q * nk + kk]) * scale;
      s.c_terms[q] = static_cast<double>(c_sum[q * nk + kk]) * scale;
    }
    s.knn_terms.resize(nq);
    for (std::size_t q = 0; q < nq; ++q)
      s.knn_terms[q] = static_cast<double>(shared[q * nk + kk]) / static_cast<double>(k);
    detail::estimate_from_terms(s, n, options.seed);
    out.by_k.push_back(std::move(s));
  }
  out.queries = nq;
  out.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  return out;
}

}  // namespace unfurl
