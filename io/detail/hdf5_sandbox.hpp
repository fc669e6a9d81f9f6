// Internal: HDF5 1.10 can crash (not fail) on a damaged or crafted file: it follows corrupt
// global-heap and B-tree addresses that carry no checksum. Before a file is opened for real,
// a forked child walks all of its metadata (every object, type, shape, attribute value and
// chunk index); when the child dies of a signal the file is reported as damaged instead of
// taking the whole program down. Library errors in the child are ignored here: the real
// read meets them again and reports them with their proper message.
#pragma once

#include <filesystem>

namespace unfurl::io::detail {

// Throws IoError naming the file when walking its metadata crashes the HDF5 library.
// Also throws IoError when the walk has not finished within the timeout (a damaged file can
// send the library into an endless loop).
void check_hdf5_in_child(const std::filesystem::path& file);

// The time allowed for the walk; 30 s by default, far above the milliseconds a sound file
// takes. Tests of damaged files lower it.
void set_hdf5_check_timeout(double seconds);

}  // namespace unfurl::io::detail
