// The SQLite wrapper: errors become stagewell::Error, cached statements are reused and released.
#include "store/sqlite.hpp"

#include <doctest/doctest.h>
#include <sqlite3.h>

#include "raw_connection.hpp"
#include "store_test_support.hpp"

namespace stagewell {
namespace {

using test::raw_connection;
using test::TempDir;

TEST_CASE("SQLite errors become database errors that say what failed") {
  TempDir dir;
  auto db = raw_connection(dir.db());

  auto bad = db->prepare("SELEKT 1");
  REQUIRE_FALSE(bad.has_value());
  CHECK(bad.error().kind == ErrorKind::database);
  CHECK(bad.error().message.find("SELEKT 1") != std::string::npos);
  CHECK(bad.error().message.find("syntax error") != std::string::npos);  // SQLite's own words

  // A bind error is reported by the step that follows it.
  auto statement = db->prepare("SELECT ?1");
  REQUIRE(statement.has_value());
  statement->bind(2, std::int64_t{5});
  auto step = statement->step();
  REQUIRE_FALSE(step.has_value());
  CHECK(step.error().kind == ErrorKind::database);
  CHECK(step.error().message.find("out of range") != std::string::npos);

  // An injected fault has no message of its own: SQLite's text for the code is used.
  db->set_step_hook([](std::string_view) { return std::optional<int>(SQLITE_IOERR); });
  auto injected = db->exec("CREATE TABLE t (x)");
  REQUIRE_FALSE(injected.has_value());
  CHECK(injected.error().message.find("disk I/O error") != std::string::npos);
  db->set_step_hook(nullptr);
  CHECK(db->exec("CREATE TABLE t (x)").has_value());  // it really did not run

  CHECK(sqlite::is_busy(SQLITE_BUSY));
  CHECK(sqlite::is_busy(SQLITE_BUSY_SNAPSHOT));
  CHECK_FALSE(sqlite::is_busy(SQLITE_LOCKED));
}

TEST_CASE("a cached statement is prepared once and reset when its loan ends") {
  TempDir dir;
  auto db = raw_connection(dir.db());
  REQUIRE(db->exec("CREATE TABLE t (x); INSERT INTO t VALUES (1), (2), (3)").has_value());
  const sqlite::Statement* first = nullptr;
  {
    auto select = db->cached("SELECT x FROM t ORDER BY x");
    REQUIRE(select.has_value());
    first = &**select;
    REQUIRE((*select)->step().value());  // stopped after one row of three
    CHECK((*select)->column_int64(0) == 1);
  }
  // No statement of the connection is still running (it would hold a read transaction open).
  for (sqlite3_stmt* s = sqlite3_next_stmt(db->handle(), nullptr); s != nullptr;
       s = sqlite3_next_stmt(db->handle(), s)) {
    CHECK(sqlite3_stmt_busy(s) == 0);
  }
  CHECK_FALSE(db->in_transaction());
  auto again = db->cached("SELECT x FROM t ORDER BY x");
  REQUIRE(again.has_value());
  CHECK(&**again == first);
  REQUIRE((*again)->step().value());
  CHECK((*again)->column_int64(0) == 1);  // from the start again
}

}  // namespace
}  // namespace stagewell
