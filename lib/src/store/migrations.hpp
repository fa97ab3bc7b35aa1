// The schema migrations compiled into the program (schema/NNN_name.sql, embedded by
// embed_schema.cmake) and the code that applies them.
#pragma once

#include <span>
#include <string_view>

#include "stagewell/result.hpp"
#include "store/sqlite.hpp"

namespace stagewell::store_detail {

struct Migration {
  int version;            // NNN: the user_version the database has once this is applied
  std::string_view name;  // "001_initial", for messages
  std::string_view sql;
};

// In version order 1, 2, ... without gaps (the build checks). Defined in the generated source.
std::span<const Migration> migrations();

// The schema version this program writes and reads: the last migration's number.
int latest_schema_version();

// Applies the migrations the database lacks, each in its own transaction together with the new
// user_version. Refuses a database newer than the program and a file that is some other
// application's database.
// REQUIRES: a read-write connection, no transaction open.
Result<void> migrate(sqlite::Connection& connection);

// For a read-only connection: succeeds only when the database is a stagewell database at exactly
// latest_schema_version() (an older one must first be opened read-write, which migrates it).
Result<void> check_schema(sqlite::Connection& connection);

}  // namespace stagewell::store_detail
