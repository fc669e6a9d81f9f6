// The project's exception hierarchy. engine/ and io/ throw these; only apps/ turns them into
// messages and process exit codes (apps/exit_codes.hpp maps each class to its code). Every message
// is one line that names the file, dataset, row, column or option at fault.
//
// Policy: bad input or options throw; a broken internal invariant throws InternalError (a bug);
// "did not converge" is a status in a result struct, not an exception.
#pragma once

#include <stdexcept>
#include <string>
#include <utility>

namespace unfurl {

class Error : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
  // Throws an error of the same class (and field) carrying `message` instead: a layer that
  // rewrites a message (a temporary file name into the name shown) keeps the kind of error.
  [[noreturn]] virtual void rethrow_with(std::string message) const = 0;
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
  [[noreturn]] void rethrow_with(std::string message) const override {
    OptionError copy(std::move(message));
    copy.field_ = field_;
    throw copy;
  }

 private:
  std::string field_;
};

// Data that was read but cannot be used as given.
class DataError : public Error {
 public:
  using Error::Error;
  [[noreturn]] void rethrow_with(std::string message) const override {
    throw DataError(std::move(message));
  }
};

// A file or dataset that does not exist or cannot be opened for reading.
class MissingInputError : public Error {
 public:
  using Error::Error;
  [[noreturn]] void rethrow_with(std::string message) const override {
    throw MissingInputError(std::move(message));
  }
};

// A resource limit (memory) that refuses the job before it starts.
class ResourceError : public Error {
 public:
  using Error::Error;
  [[noreturn]] void rethrow_with(std::string message) const override {
    throw ResourceError(std::move(message));
  }
};

// An output that cannot be created (folder missing, no permission).
class OutputError : public Error {
 public:
  using Error::Error;
  [[noreturn]] void rethrow_with(std::string message) const override {
    throw OutputError(std::move(message));
  }
};

// A read or write that failed part way (truncated or corrupt file, disk full).
class IoError : public Error {
 public:
  using Error::Error;
  [[noreturn]] void rethrow_with(std::string message) const override {
    throw IoError(std::move(message));
  }
};

// Work stopped on request (SIGINT, SIGTERM, SIGUSR1); nothing half-written was left.
class InterruptedError : public Error {
 public:
  using Error::Error;
  [[noreturn]] void rethrow_with(std::string message) const override {
    throw InterruptedError(std::move(message));
  }
};

// A broken invariant: a bug in unfurl, never the user's fault.
class InternalError : public Error {
 public:
  using Error::Error;
  [[noreturn]] void rethrow_with(std::string message) const override {
    throw InternalError(std::move(message));
  }
};

}  // namespace unfurl
