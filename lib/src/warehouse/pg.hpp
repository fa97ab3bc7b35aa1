// A thin layer over libpq: owned connections and results, statements that fail as Results, COPY.
#pragma once

#include <libpq-fe.h>

#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "stagewell/result.hpp"

namespace stagewell::pg {

struct ResultDeleter {
  void operator()(PGresult* result) const { PQclear(result); }
};
using ResultPtr = std::unique_ptr<PGresult, ResultDeleter>;

struct ConnectionDeleter {
  void operator()(PGconn* connection) const { PQfinish(connection); }
};

class Connection {
 public:
  // keywords/values as PQconnectdbParams takes them (expand_dbname on: a "dbname" value may be a
  // whole connection string). Fails with libpq's message, which never holds the password.
  static Result<Connection> open(const std::vector<std::pair<std::string, std::string>>& params);

  bool ok() const;  // the connection is still up, as far as libpq knows
  // "database flows on /run/pg:5432 as plant_writer"
  std::string describe() const;
  int server_version() const;  // e.g. 150006

  // Runs `sql` (one or more statements, no parameters); the last statement's rows.
  Result<ResultPtr> exec(std::string_view sql);
  // One statement with text parameters ($1, $2, ...); empty optionals are NULL.
  Result<ResultPtr> exec(std::string_view sql,
                         const std::vector<std::optional<std::string>>& params);
  // COPY ... FROM STDIN of `data` (text format lines).
  Result<void> copy_in(std::string_view copy_sql, std::string_view data);

  // Asks the server to cancel what this connection runs now, from a thread of its own; returns at
  // once. Safe from another thread.
  void cancel();

 private:
  explicit Connection(PGconn* connection);
  std::unique_ptr<PGconn, ConnectionDeleter> connection_;
  std::shared_ptr<PGcancel> canceller_;
};

// The value of row `row`, column `column` of `result`; empty when NULL.
std::optional<std::string> value(const PGresult* result, int row, int column);

// Appends `text` as a COPY text-format field: backslash, tab, newline and carriage return escaped;
// bytes that are not valid UTF-8, and NUL, replaced by U+FFFD (PostgreSQL's text holds neither).
void append_copy_field(std::string& out, std::string_view text);

}  // namespace stagewell::pg
