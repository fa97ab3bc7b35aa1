// Readings: stored once, duplicates ignored, conflicts never replace, flags added later, and the
// reads the service needs at start-up.
#include <doctest/doctest.h>

#include <cmath>
#include <limits>

#include "raw_connection.hpp"
#include "stagewell/store.hpp"
#include "store_test_support.hpp"

namespace stagewell {
namespace {

using test::query_int;
using test::query_text;
using test::raw_connection;
using test::TempDir;

TEST_CASE("a reading is stored once; the same reading again is a no-op") {
  TempDir dir;
  Store store = test::open_store(dir.db());
  const auto site = test::add_site(store, "raceway-a");
  auto batch = store.begin();
  REQUIRE(batch.has_value());
  const auto first = batch->insert(test::reading(site, 60'000, 0.42));
  REQUIRE(first.has_value());
  CHECK(first->outcome == InsertOutcome::stored);
  CHECK_FALSE(first->stored_stage.has_value());

  // Same site, time and stage, even with other derived values: nothing changes.
  auto again = test::reading(site, 60'000, 0.42);
  again.depth = 9.0;
  again.flags = Flag::late;
  const auto second = batch->insert(again);
  REQUIRE(second.has_value());
  CHECK(second->outcome == InsertOutcome::duplicate);
  CHECK(second->stored_stage == 0.42);
  REQUIRE(batch->commit().has_value());

  CHECK(store.readings().count() == 1);
  auto raw = raw_connection(dir.db());
  CHECK(query_int(*raw, "SELECT flags FROM readings") == 0);
  CHECK(query_int(*raw, "SELECT depth < 1.0 FROM discharge") == 1);  // not the second's 9.0
}

TEST_CASE("a different stage for a stored time is a conflict and replaces nothing") {
  TempDir dir;
  Store store = test::open_store(dir.db());
  const auto site = test::add_site(store, "raceway-a");
  const auto other = test::add_site(store, "feeder-canal");
  {
    auto batch = store.begin();
    REQUIRE(batch->insert(test::reading(site, 60'000, 0.42)).has_value());
    REQUIRE(batch->commit().has_value());
  }
  auto batch = store.begin();
  const auto result = batch->insert(test::reading(site, 60'000, 0.43));
  REQUIRE(result.has_value());
  CHECK(result->outcome == InsertOutcome::conflict);
  CHECK(result->stored_stage == 0.42);
  // The same time at another site is no conflict.
  CHECK(batch->insert(test::reading(other, 60'000, 0.43))->outcome == InsertOutcome::stored);
  REQUIRE(batch->commit().has_value());

  auto raw = raw_connection(dir.db());
  CHECK(query_text(*raw, "SELECT stage FROM discharge WHERE site = 'raceway-a'") == "0.42");
  CHECK(store.readings().count() == 2);
}

TEST_CASE("flags are ORed into a stored reading; an unknown reading reports false") {
  TempDir dir;
  Store store = test::open_store(dir.db());
  const auto site = test::add_site(store, "raceway-a");
  auto batch = store.begin();
  auto gap = test::reading(site, 60'000, 0.42);
  gap.flags = Flag::gap;
  REQUIRE(batch->insert(gap).has_value());
  CHECK(batch->add_flags(site.key, 60'000, Flag::spike) == true);
  CHECK(batch->add_flags(site.key, 61'000, Flag::spike) == false);
  REQUIRE(batch->commit().has_value());

  auto raw = raw_connection(dir.db());
  // gap = 1 << 8, spike = 1 << 5 (flags.hpp): 256 + 32.
  CHECK(query_int(*raw, "SELECT flags FROM readings") == 288);
}

TEST_CASE("the last N readings at or before a time, oldest first, of one site only") {
  TempDir dir;
  Store store = test::open_store(dir.db());
  const auto site = test::add_site(store, "raceway-a");
  const auto other = test::add_site(store, "feeder-canal");
  {
    auto batch = store.begin();
    for (std::int64_t t = 1000; t <= 10'000; t += 1000) {
      auto r = test::reading(site, t, static_cast<double>(t) / 1000.0);
      if (t == 4000) {
        r.discharge.reset();
        r.flags = Flag::out_of_range;
      }
      REQUIRE(batch->insert(r)->outcome == InsertOutcome::stored);
      REQUIRE(batch->insert(test::reading(other, t + 500, 7.0))->outcome == InsertOutcome::stored);
    }
    REQUIRE(batch->commit().has_value());
  }
  auto recent = store.readings().recent(site.key, 5500, 3);
  REQUIRE(recent.has_value());
  REQUIRE(recent->size() == 3);
  CHECK((*recent)[0].time_ms == 3000);
  CHECK((*recent)[1].time_ms == 4000);
  CHECK((*recent)[2].time_ms == 5000);
  CHECK((*recent)[2].stage == 5.0);
  CHECK((*recent)[2].discharge == 10.0);
  CHECK((*recent)[1].flags == Flags(Flag::out_of_range));
  CHECK_FALSE((*recent)[1].discharge.has_value());
  CHECK((*recent)[0].config == site.config);
  CHECK((*recent)[0].site == site.key);
  // At exactly a reading's time it is included; fewer readings than asked is fine.
  auto early = store.readings().recent(site.key, 2000, 5);
  REQUIRE(early.has_value());
  REQUIRE(early->size() == 2);
  CHECK(early->back().time_ms == 2000);
  CHECK(store.readings().recent(site.key, 999, 5)->empty());

  CHECK(store.readings().count() == 20);
  CHECK(store.readings().count(site.key) == 10);
}

TEST_CASE("readings later than all stored are inserted in groups, and every statement sees them") {
  // Readings newer than everything stored for their site are held and inserted several in one
  // statement; whatever runs next in the batch (a read, an update, a repeat, the commit) must find
  // them, and a rollback must leave none.
  TempDir dir;
  Store store = test::open_store(dir.db());
  const auto site = test::add_site(store, "raceway-a");
  const auto other = test::add_site(store, "feeder-canal");
  constexpr int kReadings = 200;  // three groups of 64 and 8 left
  for (const bool commit : {false, true}) {
    CAPTURE(commit);
    auto batch = store.begin();
    REQUIRE(batch.has_value());
    for (int i = 0; i < kReadings; ++i) {
      auto inserted = batch->insert(test::reading(i % 2 ? other : site, 60'000 * i, 0.5 + i));
      REQUIRE_MESSAGE(inserted.has_value(), inserted.error().message);
      CHECK(inserted->outcome == InsertOutcome::stored);
      if (i == 130) {
        CHECK(store.readings().count() == 131);  // a read sees every one so far
        CHECK(batch->add_flags(site.key, 60'000 * 130, Flag::spike) == true);  // the last one
      }
    }
    // The same time again (held a moment ago): a repeat, and a conflict with another stage.
    const auto repeat = batch->insert(test::reading(site, 60'000 * 198, 0.5 + 198));
    REQUIRE(repeat.has_value());
    CHECK(repeat->outcome == InsertOutcome::duplicate);
    const auto conflict = batch->insert(test::reading(other, 60'000 * 199, 7.0));
    REQUIRE(conflict.has_value());
    CHECK(conflict->outcome == InsertOutcome::conflict);
    CHECK(conflict->stored_stage == 0.5 + 199);
    if (!commit) continue;  // rolled back as it goes out of scope: nothing may stay
    REQUIRE(batch->commit().has_value());
  }
  CHECK(store.readings().count() == kReadings);
  auto raw = raw_connection(dir.db());
  CHECK(query_int(*raw,
                  "SELECT count(*) FROM discharge WHERE stage = 0.5 + round(unix_time / 60) "
                  "AND discharge = 2 * stage") == kReadings);
  CHECK(query_int(*raw, "SELECT flags FROM readings WHERE time_ms = 60000 * 130") ==
        static_cast<std::int64_t>(Flag::spike));
}

TEST_CASE("a reading that is not finite is refused and spoils the batch") {
  TempDir dir;
  Store store = test::open_store(dir.db());
  const auto site = test::add_site(store, "raceway-a");
  auto batch = store.begin();
  REQUIRE(batch->insert(test::reading(site, 1000, 0.5)).has_value());
  auto bad = test::reading(site, 2000, 0.5);
  bad.discharge = std::numeric_limits<double>::quiet_NaN();
  auto result = batch->insert(bad);
  REQUIRE_FALSE(result.has_value());
  CHECK(result.error().kind == ErrorKind::invalid_argument);
  // A batch with a failed call must not commit its other writes (or progress past the failure).
  auto committed = batch->commit();
  REQUIRE_FALSE(committed.has_value());
  CHECK(store.readings().count() == 0);
  // The store is usable again.
  auto next = store.begin();
  REQUIRE(next.has_value());
  REQUIRE(next->insert(test::reading(site, 1000, 0.5)).has_value());
  REQUIRE(next->commit().has_value());
  CHECK(store.readings().count() == 1);
}

TEST_CASE("an uncommitted batch is rolled back; one batch at a time") {
  TempDir dir;
  Store store = test::open_store(dir.db());
  const auto site = test::add_site(store, "raceway-a");
  {
    auto batch = store.begin();
    REQUIRE(batch.has_value());
    CHECK_FALSE(store.begin().has_value());
    CHECK_FALSE(store.sites().ensure("feeder-canal").has_value());  // would join the batch
    REQUIRE(batch->insert(test::reading(site, 1000, 0.5)).has_value());
  }
  CHECK(store.readings().count() == 0);
  auto batch = store.begin();
  REQUIRE(batch.has_value());
  REQUIRE(batch->commit().has_value());
  CHECK_FALSE(batch->commit().has_value());  // finished
}

TEST_CASE("a source's rejects are removed in the batch: only that source's, all or nothing") {
  TempDir dir;
  Store store = test::open_store(dir.db());
  const auto keep = [&](std::string_view source, std::string_view raw) {
    auto batch = store.begin();
    REQUIRE(batch.has_value());
    REQUIRE(batch->add_reject({std::string(source), "line 2", std::string(raw), "bad_stage: x", 5})
                .has_value());
    REQUIRE(batch->commit().has_value());
  };
  keep("/data/a.csv", "a,1");
  keep("/data/a.csv", "a,2");
  keep("/data/b.csv", "b,1");
  auto raw = raw_connection(dir.db());
  const auto count = [&](std::string_view source) {
    return query_int(*raw,
                     "SELECT count(*) FROM rejects WHERE source = '" + std::string(source) + "'");
  };
  {
    auto batch = store.begin();
    REQUIRE(batch.has_value());
    auto removed = batch->remove_rejects("/data/a.csv");
    REQUIRE(removed.has_value());
    CHECK(*removed == 2);
  }  // not committed: rolled back
  CHECK(count("/data/a.csv") == 2);
  auto batch = store.begin();
  REQUIRE(batch.has_value());
  auto removed = batch->remove_rejects("/data/a.csv");
  REQUIRE(removed.has_value());
  CHECK(*removed == 2);
  REQUIRE(batch->add_reject({"/data/a.csv", "line 3", "a,3", "bad_time: y", 6}).has_value());
  REQUIRE(batch->commit().has_value());
  CHECK(count("/data/a.csv") == 1);
  CHECK(query_text(*raw, "SELECT raw FROM rejects WHERE source = '/data/a.csv'") == "a,3");
  CHECK(count("/data/b.csv") == 1);  // another source's are kept
}

TEST_CASE("a configuration version: same text, same id; its hash is FNV-1a 64") {
  TempDir dir;
  Store store = test::open_store(dir.db());
  const auto a = store.sites().ensure("raceway-a");
  const auto b = store.sites().ensure("feeder-canal");
  REQUIRE(a.has_value());
  REQUIRE(b.has_value());
  CHECK(*a != *b);
  CHECK(store.sites().ensure("raceway-a") == *a);

  const std::string json = R"({"site":"raceway-a"})";
  const auto first = store.versions().record(*a, json, 1'700'000'000'000);
  REQUIRE(first.has_value());
  CHECK(store.versions().record(*a, json, 1'800'000'000'000) == *first);
  const auto changed =
      store.versions().record(*a, R"({"site":"raceway-a","n":0.013})", 1'800'000'000'000);
  REQUIRE(changed.has_value());
  CHECK(*changed != *first);
  const auto other_site = store.versions().record(*b, json, 1'800'000'000'000);
  REQUIRE(other_site.has_value());
  CHECK(*other_site != *first);

  auto raw = raw_connection(dir.db());
  // Reference: FNV-1a 64 computed with Debian's /usr/bin/python3 (offset basis 0xcbf29ce484222325,
  // prime 0x100000001b3); the same code gives the published vectors "a" -> af63dc4c8601ec8c and
  // "foobar" -> 85944171f73967e8 (from memory of the FNV test suite).
  CHECK(query_text(*raw, "SELECT hash FROM config_versions WHERE config_id = " +
                             std::to_string(first->value)) == "1f1ce2823b4d2b5a");
  // The first recording's time is kept.
  CHECK(query_int(*raw, "SELECT created_ms FROM config_versions WHERE config_id = " +
                            std::to_string(first->value)) == 1'700'000'000'000);
}

TEST_CASE("a read-only store refuses to write") {
  TempDir dir;
  { test::open_store(dir.db()); }
  auto reader = Store::open_read_only(dir.db());
  REQUIRE(reader.has_value());
  auto batch = reader->begin();
  REQUIRE_FALSE(batch.has_value());
  CHECK(batch.error().kind == ErrorKind::invalid_argument);
  CHECK_FALSE(reader->sites().ensure("raceway-a").has_value());
}

}  // namespace
}  // namespace stagewell
