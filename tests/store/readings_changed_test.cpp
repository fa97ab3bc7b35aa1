// Store::stored_readings_changed, the one source of truth for "stored readings changed since you
// last looked": another connection's commits and this store's own rewrites count; the batch's own
// inserts and flags, the other tables' writes and a rewrite rolled back do not.
#include <doctest/doctest.h>

#include "stagewell/store.hpp"
#include "store_test_support.hpp"

namespace stagewell {
namespace {

using test::TempDir;

bool changed(Store& store, ReadingsMark& seen) {
  auto answer = store.stored_readings_changed(seen);
  REQUIRE_MESSAGE(answer.has_value(), answer.error().message);
  return *answer;
}

TEST_CASE("what counts as a change of stored readings, and what does not") {
  TempDir dir;
  Store store = test::open_store(dir.db());
  const auto site = test::add_site(store, "raceway-a");
  ReadingsMark seen;
  CHECK(changed(store, seen));  // a mark that has seen nothing
  CHECK_FALSE(changed(store, seen));

  // The batch's own inserts and flags: their writer keeps its copies itself.
  {
    auto batch = store.begin();
    REQUIRE(batch.has_value());
    REQUIRE(batch->insert(test::reading(site, 60'000, 0.42)).has_value());
    REQUIRE(batch->insert(test::reading(site, 120'000, 0.43)).has_value());
    REQUIRE(batch->add_flags(site.key, 60'000, Flag::spike).has_value());
    daily::DayFigures figures;
    figures.day = daily::Day(1970, 1, 1);
    figures.end_ms = 86'400'000;
    figures.readings = 2;
    REQUIRE(store.daily().write_day(*batch, site.key, figures).has_value());
    REQUIRE(batch->commit().has_value());
  }
  CHECK_FALSE(changed(store, seen));

  // A rewrite rolled back changed nothing.
  const ComputedReading doubled{0.32, 1.68, Flags{}, site.config};
  {
    auto batch = store.begin();
    REQUIRE(batch.has_value());
    REQUIRE(store.readings().rewrite(*batch, site.key, 60'000, doubled).has_value());
  }
  CHECK_FALSE(changed(store, seen));
  CHECK(store.readings().recent(site.key, 60'000, 1).value().front().discharge == 0.84);

  // A rewrite committed, of values or of flags, is a change; seen once.
  {
    auto batch = store.begin();
    REQUIRE(batch.has_value());
    REQUIRE(store.readings().rewrite(*batch, site.key, 60'000, doubled).has_value());
    REQUIRE(batch->commit().has_value());
  }
  CHECK(changed(store, seen));
  CHECK_FALSE(changed(store, seen));
  {
    auto batch = store.begin();
    REQUIRE(batch.has_value());
    REQUIRE(store.readings().rewrite_flags(*batch, site.key, 120'000, Flag::gap).has_value());
    REQUIRE(batch->commit().has_value());
  }
  CHECK(changed(store, seen));
  auto rewritten = store.readings().recent(site.key, 120'000, 2);
  REQUIRE(rewritten.has_value());
  REQUIRE(rewritten->size() == 2);
  CHECK((*rewritten)[0].discharge == 1.68);
  CHECK((*rewritten)[0].flags == Flags{});  // the rewrite set the flags it was given
  CHECK((*rewritten)[0].stage == 0.42);     // never rewritten
  CHECK((*rewritten)[1].flags == Flags(Flag::gap));

  // Another connection's commit: another process storing readings.
  {
    Store other = test::open_store(dir.db());
    auto batch = other.begin();
    REQUIRE(batch.has_value());
    REQUIRE(batch->insert(test::reading(site, 180'000, 0.44)).has_value());
    REQUIRE(batch->commit().has_value());
  }
  CHECK(changed(store, seen));
  CHECK_FALSE(changed(store, seen));
}

TEST_CASE("each caller has its own mark") {
  TempDir dir;
  Store store = test::open_store(dir.db());
  const auto site = test::add_site(store, "raceway-a");
  {
    auto batch = store.begin();
    REQUIRE(batch->insert(test::reading(site, 60'000, 0.42)).has_value());
    REQUIRE(batch->commit().has_value());
  }
  ReadingsMark first;
  ReadingsMark second;
  CHECK(changed(store, first));
  CHECK(changed(store, second));
  {
    auto batch = store.begin();
    const ComputedReading values{0.3, 0.9, Flags{}, site.config};
    REQUIRE(store.readings().rewrite(*batch, site.key, 60'000, values).has_value());
    REQUIRE(batch->commit().has_value());
  }
  CHECK(changed(store, first));
  CHECK_FALSE(changed(store, first));
  CHECK(changed(store, second));  // the first caller's look is not the second's
}

}  // namespace
}  // namespace stagewell
