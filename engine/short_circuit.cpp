#include "engine/short_circuit.hpp"

#include <algorithm>
#include <cmath>
#include <tuple>

#include "engine/detail/dijkstra.hpp"
#include "engine/detail/parallel_chunks.hpp"
#include "engine/error.hpp"
#include "engine/parallel.hpp"
#include "engine/timer.hpp"

namespace unfurl {
namespace {

constexpr double kInfinity = std::numeric_limits<double>::infinity();

// What a node's scale is once one of its edges, of length x, is left out: the lower median
// of the other d - 1 lengths. With the lengths sorted s[0..d-1] and m = (d - 2) / 2, leaving
// out an element of rank <= m moves the median up to s[m + 1], one of rank > m leaves s[m];
// x <= s[m] means some copy of x has rank <= m, so two values per node answer every edge.
struct NodeScale {
  float at = 0, above = 0;  // s[m], s[m + 1]
  bool known = false;       // degree >= 2
  float without(float x) const { return x <= at ? above : at; }
};

std::vector<NodeScale> node_scales(const NeighbourGraph& graph, StopToken stop) {
  const std::size_t n = graph.nodes();
  std::vector<NodeScale> scales(n);
  ExceptionCollector errors;
#pragma omp parallel
  {
    std::vector<float> sorted;
#pragma omp for schedule(static)
    for (std::ptrdiff_t i = 0; i < static_cast<std::ptrdiff_t>(n); ++i) {
      if (errors.failed()) continue;
      errors.run([&] {
        if (i % 65536 == 0) stop.check("short circuits");
        const auto v = static_cast<std::size_t>(i);
        const std::size_t d = graph.degree(v);
        if (d < 2) return;
        const auto* first = graph.lengths.data() + graph.offsets[v];
        sorted.assign(first, first + d);
        const std::size_t m = (d - 2) / 2;
        std::nth_element(sorted.begin(), sorted.begin() + static_cast<std::ptrdiff_t>(m),
                         sorted.end());
        const float at = sorted[m];
        const float above =
            *std::min_element(sorted.begin() + static_cast<std::ptrdiff_t>(m) + 1, sorted.end());
        scales[v] = {at, above, true};
      });
    }
  }
  errors.rethrow();
  return scales;
}

enum class Outcome { found, exhausted, budget };

// One thread's bounded Dijkstra from `from` to `to` over the graph without the edge between
// them. Distances in double; only the nodes it touched are reset afterwards.
class DetourSearch {
 public:
  explicit DetourSearch(const NeighbourGraph& graph)
      : graph_(graph), distance_(graph.nodes(), kInfinity) {}

  // The last settled distance goes to `reached`: the detour when found, else a lower bound.
  Outcome run(NodeId from, NodeId to, std::size_t max_settled, double& reached) {
    Outcome outcome = Outcome::exhausted;
    reached = 0;
    heap_.clear();
    relax(from, 0.0);
    std::size_t settled = 0;
    while (!heap_.empty()) {
      const auto [key, v] = heap_.pop();
      if (key > distance_[v]) continue;  // stale entry (lazy deletion)
      reached = key;
      if (v == to) {
        outcome = Outcome::found;
        break;
      }
      if (++settled > max_settled) {
        outcome = Outcome::budget;
        break;
      }
      for (auto e = graph_.offsets[v]; e < graph_.offsets[v + 1]; ++e) {
        const NodeId t = graph_.targets[static_cast<std::size_t>(e)];
        if (v == from && t == to) continue;  // the edge under test
        relax(t, key + graph_.lengths[static_cast<std::size_t>(e)]);
      }
    }
    for (NodeId v : touched_) distance_[v] = kInfinity;
    touched_.clear();
    return outcome;
  }

 private:
  void relax(NodeId v, double d) {
    if (!(d < distance_[v])) return;
    if (distance_[v] == kInfinity) touched_.push_back(v);
    distance_[v] = d;
    heap_.push(d, v);
  }

  const NeighbourGraph& graph_;
  std::vector<double> distance_;
  std::vector<NodeId> touched_;
  detail::DistanceHeap<double> heap_;
};

struct Verdict {
  bool suspect = false, undecided = false;
};

Verdict judge(ShortCircuitEdge& edge, DetourSearch& search, const ShortCircuitOptions& o) {
  double reached = 0;
  const Outcome outcome = search.run(edge.from, edge.to, o.max_settled, reached);
  const double threshold = o.detour_factor * edge.length;
  edge.detour_bound = reached;
  switch (outcome) {
    case Outcome::found:
      edge.detour = reached;
      return {reached > threshold, false};
    case Outcome::exhausted:
      edge.separates = true;
      edge.detour_bound = kInfinity;
      return {true, false};
    case Outcome::budget:
      break;
  }
  return reached > threshold ? Verdict{true, false} : Verdict{false, true};
}

// Worst first (the header's order).
bool worse(const ShortCircuitEdge& a, const ShortCircuitEdge& b) {
  auto excess = [](const ShortCircuitEdge& e) {
    const float scale = std::max(e.scale_from, e.scale_to);
    return scale > 0 ? e.length / scale : kInfinity;
  };
  return std::make_tuple(!a.separates, -a.stretch(), -excess(a), a.from, a.to) <
         std::make_tuple(!b.separates, -b.stretch(), -excess(b), b.from, b.to);
}

}  // namespace

void ShortCircuitOptions::validate() const {
  auto bad_factor = [](double v) { return !(std::isfinite(v) && v > 1.0); };
  auto got = [](double v) { return "must be finite and above 1, got " + std::to_string(v); };
  if (bad_factor(length_factor))
    throw OptionError("ShortCircuitOptions.length_factor", got(length_factor));
  if (bad_factor(detour_factor))
    throw OptionError("ShortCircuitOptions.detour_factor", got(detour_factor));
  if (max_settled < 1) throw OptionError("ShortCircuitOptions.max_settled", "must be at least 1");
}

ShortCircuitResult find_short_circuits(const NeighbourGraph& graph,
                                       const ShortCircuitOptions& options, StopToken stop) {
  options.validate();
  const Stopwatch watch;
  ShortCircuitResult result;
  ShortCircuitSummary& s = result.summary;
  s.length_factor = options.length_factor;
  s.detour_factor = options.detour_factor;
  s.edges = graph.directed_edges() / 2;

  // Stage 1, in edge order: the long edges.
  const std::vector<NodeScale> scales = node_scales(graph, stop);
  // Chunks of nodes in parallel, each into its own list, joined in node order.
  constexpr std::size_t kChunk = 1 << 15;
  const std::size_t n = graph.nodes();
  std::vector<std::vector<ShortCircuitEdge>> found((n + kChunk - 1) / kChunk);
  const double f = options.length_factor;
  detail::parallel_chunks(
      n, kChunk, stop, "short circuits", [&](std::size_t first, std::size_t last) {
        std::vector<ShortCircuitEdge>& out = found[first / kChunk];
        for (std::size_t a = first; a < last; ++a) {
          if (!scales[a].known) continue;
          for (auto e = graph.offsets[a]; e < graph.offsets[a + 1]; ++e) {
            const NodeId b = graph.targets[static_cast<std::size_t>(e)];
            if (b <= a || !scales[b].known) continue;
            const float w = graph.lengths[static_cast<std::size_t>(e)];
            const float scale_a = scales[a].without(w), scale_b = scales[b].without(w);
            if (w > f * scale_a && w > f * scale_b)
              out.push_back({static_cast<NodeId>(a), b, w, scale_a, scale_b});
          }
        }
      });
  std::vector<ShortCircuitEdge> candidates;
  for (const auto& part : found) candidates.insert(candidates.end(), part.begin(), part.end());
  s.long_edges = candidates.size();

  // Stage 2: each candidate's detour, into its own slot.
  std::vector<Verdict> verdicts(candidates.size());
  ExceptionCollector errors;
#pragma omp parallel
  {
    DetourSearch search(graph);
#pragma omp for schedule(dynamic, 1)
    for (std::ptrdiff_t i = 0; i < static_cast<std::ptrdiff_t>(candidates.size()); ++i) {
      if (errors.failed()) continue;
      errors.run([&] {
        stop.check("short circuits");
        const auto c = static_cast<std::size_t>(i);
        verdicts[c] = judge(candidates[c], search, options);
      });
    }
  }
  errors.rethrow();

  for (std::size_t c = 0; c < candidates.size(); ++c) {
    if (verdicts[c].undecided) ++s.undecided;
    if (!verdicts[c].suspect) continue;
    ++s.suspects;
    result.worst.push_back(candidates[c]);
  }
  std::sort(result.worst.begin(), result.worst.end(), worse);
  if (result.worst.size() > options.worst) result.worst.resize(options.worst);
  if (s.undecided > 0)
    s.warnings.push_back(std::to_string(s.undecided) +
                         " long edges left undecided: their detour searches settled "
                         "ShortCircuitOptions.max_settled nodes before reaching the threshold");
  s.seconds = watch.seconds();
  return result;
}

}  // namespace unfurl
