// Internal: whether the data a dataset declares is really stored, so that nothing missing
// is read as fill values (HDF5 reads zeros, or the fill value, for storage it cannot find).
// Files a dataset or link refers to are named as what they are:
//   IoError    an external raw data file, a virtual dataset's source file or dataset, or an
//              external link's target file is missing; a shape that needs more bytes than
//              the file (and the files it refers to) could hold; a damaged chunk shape
//   DataError  data that was never written: unallocated contiguous storage, chunks missing
//              from a chunked dataset, elements of a virtual dataset mapped to no source
#pragma once

#include <cstdint>
#include <filesystem>
#include <string>

#include "engine/stop.hpp"
#include "io/hdf5_file.hpp"

namespace unfurl::io::detail {

// `file` is the file holding `d`, of file_bytes bytes; source files of a virtual dataset go
// through the same isolated check as `file` itself.
void check_storage(const H5OpenDataset& d, const std::filesystem::path& file,
                   std::uintmax_t file_bytes, const StopToken& stop);

// Throws IoError when a link along `object` (an absolute path in `file_id`) is an external
// link whose target file is missing, or whose target crashes the isolated check.
void check_external_links(hid_t file_id, const std::string& object,
                          const std::filesystem::path& file, const StopToken& stop);

}  // namespace unfurl::io::detail
