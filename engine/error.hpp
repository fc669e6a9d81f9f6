// The project's exception hierarchy. engine/ and io/ throw these; only apps/ turns them into
// messages and exit codes. Every message is one line that names the file, dataset, row,
// column or option at fault.
//
// Policy: bad input or options throw; a broken internal invariant throws InternalError (a bug);
// "did not converge" is a status in a result struct, not an exception.
#pragma once

#include <stdexcept>
#include <string>
#include <utility>

namespace unfurl {

// Exit codes, sysexits-like (see README "Exit codes").
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

class Error : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
  virtual ExitCode code() const noexcept = 0;
};

// An option or argument value that cannot be used (k < 1, unknown name, ...).
// engine/ and io/ name the options-struct field at fault ("GraphOptions.k"), never a
// command-line flag; apps/ maps the field to the flag the user typed.
class OptionError : public Error {
 public:
  using Error::Error;  // a message that names what is at fault by itself
  OptionError(std::string field, const std::string& message)
      : Error(field + ": " + message), field_(std::move(field)) {}
  // The options-struct field at fault ("GraphOptions.k"), or empty.
  const std::string& field() const noexcept { return field_; }
  ExitCode code() const noexcept override { return ExitCode::usage; }

 private:
  std::string field_;
};

// Data that was read but cannot be used as given.
class DataError : public Error {
 public:
  using Error::Error;
  ExitCode code() const noexcept override { return ExitCode::bad_data; }
};

// A file or dataset that does not exist or cannot be opened for reading.
class MissingInputError : public Error {
 public:
  using Error::Error;
  ExitCode code() const noexcept override { return ExitCode::no_input; }
};

// A resource limit (memory) that refuses the job before it starts.
class ResourceError : public Error {
 public:
  using Error::Error;
  ExitCode code() const noexcept override { return ExitCode::unavailable; }
};

// An output that cannot be created (folder missing, no permission).
class OutputError : public Error {
 public:
  using Error::Error;
  ExitCode code() const noexcept override { return ExitCode::cant_create; }
};

// A read or write that failed part way (truncated or corrupt file, disk full).
class IoError : public Error {
 public:
  using Error::Error;
  ExitCode code() const noexcept override { return ExitCode::io_error; }
};

// Work stopped on request (SIGINT, SIGTERM, SIGUSR1); nothing half-written was left.
class InterruptedError : public Error {
 public:
  using Error::Error;
  ExitCode code() const noexcept override { return ExitCode::interrupted; }
};

// A broken invariant: a bug in unfurl, never the user's fault.
class InternalError : public Error {
 public:
  using Error::Error;
  ExitCode code() const noexcept override { return ExitCode::internal; }
};

}  // namespace unfurl
