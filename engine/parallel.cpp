#include "engine/parallel.hpp"

#include <omp.h>

namespace unfurl {

int resolve_threads(int requested) {
  return requested > 0 ? requested : omp_get_max_threads();
}

}  // namespace unfurl
