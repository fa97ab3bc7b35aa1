// A connection of its own to a database file, outside the store, for tests that look at the file
// as an analyst would (views, raw tables): an independent check of what the store wrote. Uses the
// store's private SQLite wrapper (the store tests' include path has lib/src).
#pragma once

#include <doctest/doctest.h>

#include <filesystem>
#include <memory>
#include <string>
#include <string_view>

#include "store/sqlite.hpp"

namespace stagewell::test {

// A connection of its own to the database file, outside the store.
inline std::unique_ptr<sqlite::Connection> raw_connection(
    const std::filesystem::path& path,
    sqlite::Connection::Access access = sqlite::Connection::Access::read_write_create) {
  auto connection = sqlite::Connection::open(path, access);
  REQUIRE_MESSAGE(connection.has_value(), connection.error().message);
  return std::move(*connection);
}

inline std::int64_t query_int(sqlite::Connection& connection, std::string_view sql) {
  auto value = connection.query_int64(sql);
  REQUIRE_MESSAGE(value.has_value(), value.error().message);
  return *value;
}

inline std::string query_text(sqlite::Connection& connection, std::string_view sql) {
  auto value = connection.query_text(sql);
  REQUIRE_MESSAGE(value.has_value(), value.error().message);
  return *value;
}

}  // namespace stagewell::test
