// One writer and readers at once (WAL), and a busy database: the writer waits and looks again, and
// when it finally gives up nothing of the batch is half-stored.
#include <doctest/doctest.h>
#include <sqlite3.h>

#include "raw_connection.hpp"
#include "stagewell/store.hpp"
#include "store_test_support.hpp"

namespace stagewell {
namespace {

using sqlite::Connection;
using test::query_int;
using test::raw_connection;
using test::TempDir;

// Small waits so that a test that gives up does so quickly (nothing here measures time). The
// wait is counted in pauses (LockWait), so a statement that meets a lock every time is tried
// exactly 1 + give_up_after_ms / poll_ms times: here 3.
StoreOptions impatient() {
  StoreOptions options;
  options.lock_wait.give_up_after_ms = 2;
  options.lock_wait.poll_ms = 1;
  return options;
}
const StoreOptions kImpatient = impatient();
constexpr int kImpatientAttempts = 3;

TEST_CASE("a reader in the middle of a read does not stop the writer (WAL)") {
  TempDir dir;
  Store writer = test::open_store(dir.db());
  const auto site = test::add_site(writer, "raceway-a");
  {
    auto batch = writer.begin();
    REQUIRE(batch->insert(test::reading(site, 1000, 0.5)).has_value());
    REQUIRE(batch->commit().has_value());
  }
  // An analyst's connection, read-only, holding a read transaction open.
  auto analyst = raw_connection(dir.db(), Connection::Access::read_only);
  REQUIRE(analyst->exec("BEGIN").has_value());
  CHECK(query_int(*analyst, "SELECT count(*) FROM discharge") == 1);

  auto reader = Store::open_read_only(dir.db(), kImpatient);
  REQUIRE_MESSAGE(reader.has_value(), reader.error().message);

  for (std::int64_t t = 2000; t <= 5000; t += 1000) {
    auto batch = writer.begin();
    REQUIRE_MESSAGE(batch.has_value(), batch.error().message);
    REQUIRE(batch->insert(test::reading(site, t, 0.5)).has_value());
    auto committed = batch->commit();
    CHECK_MESSAGE(committed.has_value(), committed.error().message);
    // Another reader sees each commit as it lands.
    CHECK(reader->readings().count() == t / 1000);
  }
  // The open read transaction still sees its snapshot, then the new rows once it ends.
  CHECK(query_int(*analyst, "SELECT count(*) FROM discharge") == 1);
  REQUIRE(analyst->exec("COMMIT").has_value());
  CHECK(query_int(*analyst, "SELECT count(*) FROM discharge") == 5);
}

TEST_CASE("a commit that finds the database busy is retried and succeeds") {
  TempDir dir;
  Store store = test::open_store(dir.db(), kImpatient);
  const auto site = test::add_site(store, "raceway-a");
  int commits = 0;
  store.set_step_hook_for_testing([&](std::string_view sql) -> std::optional<int> {
    if (sql != "COMMIT") return std::nullopt;
    return ++commits <= 2 ? std::optional<int>(SQLITE_BUSY) : std::nullopt;
  });
  auto batch = store.begin();
  REQUIRE(batch->insert(test::reading(site, 1000, 0.5)).has_value());
  REQUIRE(batch->set_progress("/data/gauge.csv", {"2049:77", 40, 10}).has_value());
  auto committed = batch->commit();
  CHECK_MESSAGE(committed.has_value(), committed.error().message);
  CHECK(commits == 3);
  store.set_step_hook_for_testing(nullptr);
  CHECK(store.readings().count() == 1);
  CHECK(store.progress().committed("/data/gauge.csv")->value().byte_offset == 40);
}

TEST_CASE("a commit still busy after the last attempt fails whole") {
  TempDir dir;
  Store store = test::open_store(dir.db(), kImpatient);
  const auto site = test::add_site(store, "raceway-a");
  int commits = 0;
  store.set_step_hook_for_testing([&](std::string_view sql) -> std::optional<int> {
    if (sql != "COMMIT") return std::nullopt;
    ++commits;
    return SQLITE_BUSY;
  });
  auto batch = store.begin();
  REQUIRE(batch->insert(test::reading(site, 1000, 0.5)).has_value());
  REQUIRE(batch->set_progress("/data/gauge.csv", {"2049:77", 40, 10}).has_value());
  auto committed = batch->commit();
  REQUIRE_FALSE(committed.has_value());
  CHECK(committed.error().kind == ErrorKind::database);
  CHECK(committed.error().message.find("database is locked") != std::string::npos);
  CHECK(commits == kImpatientAttempts);
  store.set_step_hook_for_testing(nullptr);
  CHECK(store.readings().count() == 0);
  CHECK_FALSE(store.progress().committed("/data/gauge.csv")->has_value());
}

TEST_CASE("a writer waits for another connection's write lock and retries") {
  TempDir dir;
  Store store = test::open_store(dir.db(), kImpatient);
  const auto site = test::add_site(store, "raceway-a");

  // Another connection (say, an analyst running an UPDATE) holds the write lock.
  auto other = raw_connection(dir.db());
  REQUIRE(other->exec("BEGIN IMMEDIATE").has_value());

  SUBCASE("the lock is released while the writer waits: the batch goes ahead") {
    // A store told of its wait at once; the lock is released when it is (between two looks).
    StoreOptions told = kImpatient;
    told.lock_wait.notice_after_ms = 0;
    int waits = 0;
    int resumed = 0;
    told.lock_wait.on_waiting = [&](std::int64_t) {
      ++waits;
      REQUIRE(other->exec("COMMIT").has_value());
    };
    told.lock_wait.on_resumed = [&](std::int64_t) { ++resumed; };
    Store waiting = test::open_store(dir.db(), told);
    int begins = 0;
    waiting.set_step_hook_for_testing([&](std::string_view sql) -> std::optional<int> {
      if (sql == "BEGIN IMMEDIATE") ++begins;
      return std::nullopt;
    });
    auto batch = waiting.begin();
    REQUIRE_MESSAGE(batch.has_value(), batch.error().message);
    // One step: SQLite met the real lock inside it, the store waited, and the second look found
    // the lock free.
    CHECK(begins == 1);
    CHECK(waits == 1);
    CHECK(resumed == 1);
    REQUIRE(batch->insert(test::reading(site, 1000, 0.5)).has_value());
    REQUIRE(batch->commit().has_value());
    CHECK(waiting.readings().count() == 1);
  }

  SUBCASE("the lock is never released: begin fails, and works once it is") {
    auto batch = store.begin();
    REQUIRE_FALSE(batch.has_value());
    CHECK(batch.error().kind == ErrorKind::database);
    CHECK(batch.error().message.find("database is locked") != std::string::npos);
    REQUIRE(other->exec("COMMIT").has_value());
    auto retry = store.begin();
    REQUIRE_MESSAGE(retry.has_value(), retry.error().message);
    REQUIRE(retry->insert(test::reading(site, 1000, 0.5)).has_value());
    REQUIRE(retry->commit().has_value());
    CHECK(store.readings().count() == 1);
  }
}

}  // namespace
}  // namespace stagewell
