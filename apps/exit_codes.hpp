// The process exit codes of `unfurl`, sysexits-like (README "Exit codes"), and the one mapping
// from the project's exception classes (engine/error.hpp) to them. Only apps/ (and the test
// probes that stand in for a command) turns an error into a process exit code.
#pragma once

#include "engine/error.hpp"

namespace unfurl::app {

enum class ExitCode : int {
  ok = 0,
  usage = 64,        // bad command line or option value
  bad_data = 65,     // input read but unusable: NaN, ragged rows, wrong shape, bad graph
  no_input = 66,     // input file or dataset missing or unreadable
  unavailable = 69,  // a resource limit refuses the job (memory estimate over --max-memory)
  internal = 70,     // a bug: an invariant broke
  cant_create = 73,  // output file cannot be created
  io_error = 74,     // read or write failed part way
  interrupted = 75,  // stopped by a signal; rerunning resumes or repeats safely
};

inline ExitCode exit_code_of(const Error& e) noexcept {
  if (dynamic_cast<const OptionError*>(&e)) return ExitCode::usage;
  if (dynamic_cast<const DataError*>(&e)) return ExitCode::bad_data;
  if (dynamic_cast<const MissingInputError*>(&e)) return ExitCode::no_input;
  if (dynamic_cast<const ResourceError*>(&e)) return ExitCode::unavailable;
  if (dynamic_cast<const OutputError*>(&e)) return ExitCode::cant_create;
  if (dynamic_cast<const IoError*>(&e)) return ExitCode::io_error;
  if (dynamic_cast<const InterruptedError*>(&e)) return ExitCode::interrupted;
  return ExitCode::internal;  // InternalError, and any class this list does not know yet
}

}  // namespace unfurl::app
