// Internal: the attributes of an HDF5 object rendered as text, reading untrusted files
// defensively (sizes checked before reading, long values summarised).
#pragma once

#include <vector>

#include "io/detail/hdf5.hpp"
#include "io/file_description.hpp"

namespace unfurl::io::detail {

// Every attribute of `object` (a file, group or dataset id), in name order. An attribute that
// cannot be read is listed with the value "<unreadable>" rather than failing the listing.
std::vector<AttributeText> attribute_texts(hid_t object);

}  // namespace unfurl::io::detail
