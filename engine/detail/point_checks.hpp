// Input checks shared by the quality stages.
#pragma once

#include "engine/points.hpp"

namespace unfurl::detail {

// DataError "<what>: row R column C is not finite (rows counted from 0)" on the first NaN or
// infinity; DataError when the set is empty.
void require_finite(const PointSet& points, const char* what);

}  // namespace unfurl::detail
