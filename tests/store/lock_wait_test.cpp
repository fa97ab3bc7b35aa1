// Waiting for a lock another connection holds (LockWait): every statement waits through SQLite's
// busy handler; another thread can stop the wait; a long wait is reported when it starts to last
// and when work resumes; a bounded wait gives up. Nothing here measures time: a wait that did not
// end would hang the test until ctest's timeout.
#include <doctest/doctest.h>
#include <sqlite3.h>

#include <atomic>
#include <chrono>
#include <memory>
#include <thread>

#include "raw_connection.hpp"
#include "stagewell/store.hpp"
#include "store_test_support.hpp"

namespace stagewell {
namespace {

using test::raw_connection;
using test::TempDir;

// What a store told of its waits.
struct Told {
  std::atomic<int> waiting{0};
  std::atomic<int> resumed{0};
  std::atomic<std::int64_t> resumed_after_ms{-1};
};

StoreOptions telling(Told& told, std::int64_t notice_after_ms) {
  StoreOptions options;
  options.lock_wait.poll_ms = 5;
  options.lock_wait.notice_after_ms = notice_after_ms;
  options.lock_wait.on_waiting = [&told](std::int64_t) { ++told.waiting; };
  options.lock_wait.on_resumed = [&told](std::int64_t waited_ms) {
    ++told.resumed;
    told.resumed_after_ms = waited_ms;
  };
  return options;
}

// Waits until `count` is not zero (unbounded here; ctest bounds the test).
void wait_for(const std::atomic<int>& count) {
  while (count.load() == 0) std::this_thread::sleep_for(std::chrono::milliseconds(1));
}

TEST_CASE("a wait for another connection's lock ends when another thread cancels it") {
  TempDir dir;
  Told told;
  auto cancel = std::make_shared<std::atomic<bool>>(false);
  StoreOptions options = telling(told, 20);
  options.lock_wait.give_up_after_ms.reset();  // as long as it takes
  options.lock_wait.cancel = cancel;
  Store store = test::open_store(dir.db(), options);
  const auto site = test::add_site(store, "raceway-a");

  auto other = raw_connection(dir.db());
  REQUIRE(other->exec("BEGIN EXCLUSIVE").has_value());
  // The canceller, on a thread of its own: once the store has said it is waiting, stop it.
  std::thread canceller([&] {
    wait_for(told.waiting);
    cancel->store(true);
  });
  auto batch = store.begin();
  canceller.join();
  REQUIRE_FALSE(batch.has_value());
  CHECK(batch.error().kind == ErrorKind::cancelled);
  CHECK(batch.error().message.find("BEGIN IMMEDIATE") != std::string::npos);
  CHECK(told.waiting == 1);
  CHECK(told.resumed == 0);  // it did not resume: it failed

  // The cancellation stops waits only: with the lock free, work goes on as before.
  REQUIRE(other->exec("COMMIT").has_value());
  auto again = store.begin();
  REQUIRE_MESSAGE(again.has_value(), again.error().message);
  REQUIRE(again->insert(test::reading(site, 1000, 0.5)).has_value());
  REQUIRE(again->commit().has_value());
  CHECK(store.readings().count() == 1);
}

TEST_CASE("a long wait is reported once, and once more when the lock is released") {
  TempDir dir;
  Told told;
  StoreOptions options = telling(told, 20);
  options.lock_wait.give_up_after_ms.reset();
  Store store = test::open_store(dir.db(), options);
  const auto site = test::add_site(store, "raceway-a");

  auto other = raw_connection(dir.db());
  REQUIRE(other->exec("BEGIN EXCLUSIVE").has_value());
  // Another thread releases the lock once the store has said it is waiting. The raw connection
  // is not used by this thread in the meantime (a connection belongs to one thread at a time).
  bool released = false;
  std::thread releaser([&] {
    wait_for(told.waiting);
    released = other->exec("COMMIT").has_value();
  });
  auto batch = store.begin();
  releaser.join();
  CHECK(released);
  REQUIRE_MESSAGE(batch.has_value(), batch.error().message);
  CHECK(told.waiting == 1);
  CHECK(told.resumed == 1);
  // At least the pauses counted before the notice (20 ms of 5 ms pauses) went by.
  CHECK(told.resumed_after_ms >= 20);
  REQUIRE(batch->insert(test::reading(site, 1000, 0.5)).has_value());
  REQUIRE(batch->commit().has_value());
  CHECK(told.waiting == 1);  // nothing more to report
  CHECK(told.resumed == 1);
}

TEST_CASE("a bounded wait with no cancellation fails once the bound is reached") {
  TempDir dir;
  Told told;
  StoreOptions options = telling(told, 20);
  options.lock_wait.give_up_after_ms = 40;  // eight pauses of 5 ms; noticed after four
  Store store = test::open_store(dir.db(), options);
  (void)test::add_site(store, "raceway-a");

  auto other = raw_connection(dir.db());
  REQUIRE(other->exec("BEGIN EXCLUSIVE").has_value());
  int begins = 0;
  store.set_step_hook_for_testing([&](std::string_view sql) -> std::optional<int> {
    if (sql == "BEGIN IMMEDIATE") ++begins;
    return std::nullopt;
  });
  auto batch = store.begin();
  REQUIRE_FALSE(batch.has_value());
  CHECK(batch.error().kind == ErrorKind::database);
  CHECK(batch.error().message.find("database is locked") != std::string::npos);
  CHECK(begins == 1);        // one statement, waited for inside its step
  CHECK(told.waiting == 1);  // the wait lasted past the notice...
  CHECK(told.resumed == 0);  // ...and never resumed
  REQUIRE(other->exec("ROLLBACK").has_value());
}

TEST_CASE("reads wait too: a reader meets a lock only in rare cases, and waits as told") {
  // A read-only store's statements go through the same busy handler: an injected busy step (a
  // lock met at that step) is waited for and looked at again, here until the third look.
  TempDir dir;
  { test::open_store(dir.db()); }
  Told told;
  StoreOptions options = telling(told, 0);
  auto reader = Store::open_read_only(dir.db(), options);
  REQUIRE_MESSAGE(reader.has_value(), reader.error().message);
  int looks = 0;
  reader->set_step_hook_for_testing([&](std::string_view) -> std::optional<int> {
    return ++looks <= 2 ? std::optional<int>(SQLITE_BUSY) : std::nullopt;
  });
  auto count = reader->readings().count();
  REQUIRE_MESSAGE(count.has_value(), count.error().message);
  CHECK(*count == 0);
  CHECK(looks == 3);
  CHECK(told.waiting == 1);
  CHECK(told.resumed == 1);
}

}  // namespace
}  // namespace stagewell
