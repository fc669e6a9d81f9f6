// parallel_chunks: the one parallel loop shape of the neighbour stage (declared in
// neighbour_search.hpp). Chunks are independent, so results do not depend on thread count.
#pragma once

#include <cstddef>
#include <cstdint>

#include "engine/parallel.hpp"
#include "engine/stop.hpp"

namespace unfurl::detail {

template <class Body>
void parallel_chunks(std::size_t count, std::size_t chunk, StopToken stop, const char* stage,
                     Body&& body) {
  if (count == 0) return;
  if (chunk == 0) chunk = 1;
  const auto chunks = static_cast<std::int64_t>((count + chunk - 1) / chunk);
  ExceptionCollector errors;
#pragma omp parallel for schedule(dynamic, 1)
  for (std::int64_t c = 0; c < chunks; ++c) {
    if (errors.failed()) continue;
    errors.run([&] {
      stop.check(stage);
      const std::size_t begin = static_cast<std::size_t>(c) * chunk;
      const std::size_t end = begin + chunk < count ? begin + chunk : count;
      body(begin, end);
    });
  }
  errors.rethrow();
}

}  // namespace unfurl::detail
