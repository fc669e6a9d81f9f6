// Uses the installed engine: a Swiss roll's exact 10-nearest graph must be connected and
// have at least k edges per node (every node lists k neighbours; union symmetrisation).
#include <unfurl/engine/components.hpp>
#include <unfurl/engine/neighbours.hpp>
#include <unfurl/engine/synthetic.hpp>

#include <cstdio>

int main() {
  const auto roll = unfurl::swiss_roll(500, 3);
  const auto built = unfurl::build_neighbour_graph(roll.points, {});
  const auto parts = unfurl::connected_components(built.graph);
  for (std::size_t i = 0; i < built.graph.nodes(); ++i)
    if (built.graph.degree(i) < 10) return 1;
  std::printf("consumer: %zu nodes, %zu components\n", built.graph.nodes(), parts.count);
  return parts.count == 1 ? 0 : 1;
}
