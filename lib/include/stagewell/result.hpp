// The one result type for fallible library calls. Exceptions never cross a module boundary:
// a module catches what its dependencies throw (yaml-cpp, std::filesystem) and returns an Error.
#pragma once

#include <expected>
#include <string>
#include <utility>

namespace stagewell {

enum class ErrorKind {
  invalid_argument,  // the caller asked for something out of range (a negative flow, an unknown
                     // site)
  impossible,        // well-formed but physically impossible (more than a closed conduit can carry)
  parse,             // malformed input text
  not_found,         // a file, site or record that does not exist
  io,                // the operating system said no
  database,          // SQLite said no
  cancelled,         // a wait for the database was stopped on request (StoreOptions, LockWait)
  damaged,           // the database file is damaged: SQLite found it malformed, or not a database
};

struct Error {
  ErrorKind kind = ErrorKind::invalid_argument;
  std::string message;  // complete sentence for a person, no trailing newline
};

template <typename T>
using Result = std::expected<T, Error>;

inline std::unexpected<Error> fail(ErrorKind kind, std::string message) {
  return std::unexpected<Error>(Error{kind, std::move(message)});
}

}  // namespace stagewell
