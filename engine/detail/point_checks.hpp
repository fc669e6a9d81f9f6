// The engine's one finiteness check, and the input checks built on it.
#pragma once

#include <cstddef>
#include <span>
#include <string>

#include "engine/points.hpp"

namespace unfurl::detail {

// DataError "<what>: row R, column C is not a finite number" on the first NaN or infinity of
// row-major values with `cols` columns whose first row is `first_row`. Rows and columns count
// from 0, as in every engine message.
void require_finite(std::span<const float> values, std::size_t cols, const std::string& what,
                    std::size_t first_row = 0);
void require_finite(const PointSet& points, const std::string& what);

// The quality stages' inputs: DataError when the set is empty or its values do not fill
// rows x columns, then require_finite.
void require_points(const PointSet& points, const std::string& what);

}  // namespace unfurl::detail
