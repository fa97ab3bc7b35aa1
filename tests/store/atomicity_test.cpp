// A batch's readings, rejects and ingest progress are stored together or not at all, whichever
// step fails, and nothing stored before is lost. Faults are injected at sqlite3_step.
#include <doctest/doctest.h>
#include <sqlite3.h>
#include <sys/wait.h>
#include <unistd.h>

#include "raw_connection.hpp"
#include "stagewell/store.hpp"
#include "store_test_support.hpp"

namespace stagewell {
namespace {

using test::FailNthStep;
using test::TempDir;

constexpr std::string_view kSource = "/data/gauge.csv";

// Batch A, committed before any fault: two readings, progress to byte 100.
void store_batch_a(Store& store, const test::Site& site) {
  auto batch = store.begin();
  REQUIRE(batch.has_value());
  REQUIRE(batch->insert(test::reading(site, 1000, 0.5)).has_value());
  REQUIRE(batch->insert(test::reading(site, 2000, 0.6)).has_value());
  REQUIRE(batch->set_progress(kSource, {"2049:77", 100, 10}).has_value());
  REQUIRE(batch->commit().has_value());
}

// Batch B: three readings, a reject, a flag on a reading of A, progress to byte 250. Stops at
// the first failure; returns whether everything, the commit included, succeeded.
bool try_batch_b(Store& store, const test::Site& site) {
  auto batch = store.begin();
  if (!batch) return false;
  for (std::int64_t t : {3000, 4000, 5000}) {
    if (!batch->insert(test::reading(site, t, 0.7))) return false;
  }
  if (!batch->add_reject({kSource, "gauge.csv:4", "bad line", "not a number", 20})) return false;
  if (!batch->add_flags(site.key, 2000, Flag::spike)) return false;
  if (!batch->set_progress(kSource, {"2049:77", 250, 20})) return false;
  return batch->commit().has_value();
}

struct Observed {
  std::int64_t readings;
  std::int64_t rejects;
  std::int64_t offset;
  std::int64_t flags_at_2000;
};

Observed observe(const std::filesystem::path& db) {
  auto raw = test::raw_connection(db);
  return Observed{test::query_int(*raw, "SELECT count(*) FROM readings"),
                  test::query_int(*raw, "SELECT count(*) FROM rejected_lines"),
                  test::query_int(*raw, "SELECT byte_offset FROM ingest_progress"),
                  test::query_int(*raw, "SELECT flags FROM readings WHERE time_ms = 2000")};
}

void check_only_a(const Observed& seen) {
  CHECK(seen.readings == 2);
  CHECK(seen.rejects == 0);
  CHECK(seen.offset == 100);
  CHECK(seen.flags_at_2000 == 0);
}

void check_a_and_b(const Observed& seen) {
  CHECK(seen.readings == 5);
  CHECK(seen.rejects == 1);
  CHECK(seen.offset == 250);
  CHECK(seen.flags_at_2000 == static_cast<std::int64_t>(Flag::spike));
}

TEST_CASE("a failed commit stores neither the readings nor the progress, and loses nothing") {
  TempDir dir;
  Store store = test::open_store(dir.db());
  const auto site = test::add_site(store, "raceway-a");
  store_batch_a(store, site);

  int commits = 0;
  store.set_step_hook_for_testing([&](std::string_view sql) -> std::optional<int> {
    if (sql != "COMMIT") return std::nullopt;
    ++commits;
    return SQLITE_IOERR_FSYNC;  // the disk failed while making the commit durable
  });
  CHECK_FALSE(try_batch_b(store, site));
  CHECK(commits == 1);  // an I/O error is not retried: only a busy database is
  check_only_a(observe(dir.db()));
  auto progress = store.progress().committed(kSource);
  REQUIRE(progress.has_value());
  REQUIRE(progress->has_value());
  CHECK((*progress)->byte_offset == 100);

  // The source is read again from byte 100: the same batch now commits, nothing doubled.
  store.set_step_hook_for_testing(nullptr);
  CHECK(try_batch_b(store, site));
  check_a_and_b(observe(dir.db()));
}

TEST_CASE("failing any one step of a batch stores all of it or none of it") {
  // Fail step 1, then step 2, ... of batch B, until B runs without reaching the failing step.
  int injected = 0;
  for (int n = 1;; ++n) {
    CAPTURE(n);
    TempDir dir;
    Store store = test::open_store(dir.db());
    const auto site = test::add_site(store, "raceway-a");
    store_batch_a(store, site);
    const FailNthStep fail(n, SQLITE_IOERR);
    store.set_step_hook_for_testing(fail);
    const bool succeeded = try_batch_b(store, site);
    const bool reached = fail.calls() >= n;
    store.set_step_hook_for_testing(nullptr);
    if (!reached) {
      CHECK(succeeded);
      check_a_and_b(observe(dir.db()));
      break;
    }
    ++injected;
    if (succeeded) {
      check_a_and_b(observe(dir.db()));  // only a step after the commit failed (none exist)
    } else {
      check_only_a(observe(dir.db()));
      // The store recovers: the batch can be done again.
      CHECK(try_batch_b(store, site));
      check_a_and_b(observe(dir.db()));
    }
  }
  // BEGIN, 3 inserts, reject, flags, progress, COMMIT: at least 8 steps were failed one by one.
  CHECK(injected >= 8);
}

TEST_CASE("a process killed in the middle of a batch leaves only what was committed") {
  TempDir dir;
  {
    Store store = test::open_store(dir.db());
    store_batch_a(store, test::add_site(store, "raceway-a"));
  }
  const pid_t child = fork();
  REQUIRE(child >= 0);
  if (child == 0) {
    // The child writes batch B and dies before committing it: no destructors, no rollback.
    auto store = Store::open(dir.db());
    if (!store) _exit(2);
    auto key = store->sites().ensure("raceway-a");
    auto config = store->versions().record(*key, R"({"id":"raceway-a"})", 0);
    if (!key || !config) _exit(3);
    auto batch = store->begin();
    if (!batch) _exit(4);
    for (std::int64_t t : {3000, 4000, 5000}) {
      if (!batch->insert(test::reading({*key, *config}, t, 0.7))) _exit(5);
    }
    if (!batch->set_progress(kSource, {"2049:77", 250, 20})) _exit(6);
    _exit(0);
  }
  int status = 0;
  REQUIRE(waitpid(child, &status, 0) == child);
  REQUIRE(WIFEXITED(status));
  REQUIRE(WEXITSTATUS(status) == 0);
  // Opening again recovers the file; batch B is gone, batch A is whole.
  Store store = test::open_store(dir.db());
  check_only_a(observe(dir.db()));
}

}  // namespace
}  // namespace stagewell
