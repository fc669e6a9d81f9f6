// Internal: HDF5 1.10 can crash (not fail) on a damaged or crafted file: it follows corrupt
// global-heap and B-tree addresses that carry no checksum, and some damage sends it into an
// endless loop that no signal handler can break. Before a file is opened for real, a forked
// child does to its metadata what the parent will do (lists the datasets, renders every
// attribute, reads every type, shape, filter pipeline and chunk index); when the child dies
// of a signal or runs out of time the file is reported as damaged instead of taking the
// whole program down or hanging it. Library errors in the child are ignored here: the real
// read meets them again and reports them with their proper message.
#pragma once

#include <filesystem>
#include <span>

#include "engine/stop.hpp"

namespace unfurl::io::detail {

// Throws IoError naming the file when walking its metadata crashes the HDF5 library.
// Also throws IoError when the walk has not finished within the timeout (a damaged file can
// send the library into an endless loop), and InterruptedError when `stop` is requested
// while waiting (the child is killed).
void check_hdf5_in_child(const std::filesystem::path& file, const StopToken& stop = {});

// The same walk over several files in one child, for a caller about to open many (a work
// folder's pieces): one fork of a process that is still small, instead of one per file once
// the process holds gigabytes (each fork copies its page tables and leaves every page
// write-protected, so that the parent's next writes fault page by page). True when every
// walk finished; false when the child crashed, ran out of time (the limit times the file
// count) or could not be started: the caller then checks each file alone. InterruptedError
// when `stop` is requested while waiting.
bool check_hdf5_files_in_child(std::span<const std::filesystem::path> files,
                               const StopToken& stop = {});

// The time allowed for the walk: 10 s by default (or UNFURL_HDF5_CHECK_SECONDS), far above
// the milliseconds a sound file takes. Tests of damaged files lower it.
void set_hdf5_check_timeout(double seconds);

}  // namespace unfurl::io::detail
