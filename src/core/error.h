// Error types that carry bad input up to the one place in the CLI that
// prints them and sets the exit code. Internal invariants use assert().
#pragma once

#include <stdexcept>
#include <string>

namespace figura {

// Bad input from the user: a file that cannot be read, a value out of range,
// a missing unit. The message is one line and names the file or option.
// The CLI prints it and exits with code 2.
class InputError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

// An output could not be written (full disk, read-only folder, an existing
// report that must not be overwritten). Exit code 2, nothing half-written.
class OutputError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

// Status of a stage result, as written in result JSON ("ok", "warning",
// "error").
enum class Status { kOk, kWarning, kError };

// The JSON spelling of a status.
const char* StatusName(Status status);

}  // namespace figura
