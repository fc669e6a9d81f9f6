// Names of the temporary files of io::OutputSet: ".NAME.part-HOST-PID-SEQ" beside the target,
// NAME shortened (at a UTF-8 character boundary) so the whole stays within the folder's
// file-name limit. HOST is this host's name hashed to 8 hex digits, so that in a folder
// shared between hosts only the host that made a temporary file judges whether its process
// still exists.
#pragma once

#include <cstddef>
#include <filesystem>

namespace unfurl::io::detail {

// A fresh temporary name for `target` (unique within this process), in target's folder.
std::filesystem::path temp_name_for(const std::filesystem::path& target);

// Removes the temporary files (this form, and the older ".NAME.part-PID-SEQ") left in
// `folder` by processes of this host that no longer exist (kill(pid, 0) gives ESRCH). Only
// regular files owned by the effective user are removed. Returns how many.
std::size_t remove_stale_temporaries(const std::filesystem::path& folder);

}  // namespace unfurl::io::detail
