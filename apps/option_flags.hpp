// The one table from options-struct fields to command-line flags. engine/ and io/ name the
// field at fault (OptionError("GraphOptions.k", "must be at least 1, got 0")); the user typed
// a flag of the command in use, and the same field can have different flags in different
// commands (the score stage's QualityOptions.ks is --score-k). main()'s handler prints the
// flag through user_message().
#pragma once

#include <string>
#include <vector>

#include <CLI/CLI.hpp>

#include "engine/error.hpp"

namespace unfurl::app {

// The flag of `field` ("GraphOptions.k") in `command` ("embed"): "--k". "" when the field has
// no flag in that command (an internal field such as GraphOptions.block_rows) or is unknown.
std::string flag_of(const std::string& command, const std::string& field);

// Whether the table has a row for `field` (with or without a flag): every field engine/ and
// io/ name in an OptionError must have one (tests/apps/option_flags_test.cpp checks).
bool field_known(const std::string& field);

// An error message as the user of `cli`'s command reads it: every field of the table named in
// it becomes the command's flag ("NearestK.k: must be at least 1, got 0" -> "--k: must be at
// least 1, got 0"; "use a larger NearestK.k" -> "use a larger --k"). A field without a flag
// in that command is shown as named.
std::string user_message(const CLI::App& cli, const std::string& what);

}  // namespace unfurl::app
