// Daily figures kept current batch by batch (DailyKeeper) equal a full recomputation from the
// stored readings, whatever order the readings arrive in: late readings, flags added to earlier
// readings, days across a DST change. A failure while updating leaves nothing of the batch.
// (The figures themselves are checked against independent references in daily_integrate_test.cpp
// and tests/e2e/daily_figures_test.py.)
#include <doctest/doctest.h>
#include <sqlite3.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <random>
#include <vector>

#include "../store/store_test_support.hpp"
#include "stagewell/daily.hpp"
#include "stagewell/daily_keeper.hpp"

namespace stagewell::daily {
namespace {

constexpr std::int64_t kMinute = 60'000;

Config denver_config() {
  Config config;
  config.units = units::System::metric;
  config.timezone = "America/Denver";
  SiteConfig site;
  site.id = "gauge";
  site.checks.max_gap_s = 20 * 60;
  config.sites.push_back(site);
  return config;
}

// Readings around the 25-hour day 2026-11-01 in Denver: about every 3 minutes with millisecond
// jitter, holes longer than max_gap, some readings without discharge (out_of_range).
std::vector<StoredReading> sample(const test::Site& site) {
  std::mt19937_64 random(20261101);
  std::uniform_int_distribution<std::int64_t> jitter(-40'000, 40'000);
  std::vector<StoredReading> out;
  const std::int64_t begin = 1793512800000 - 24 * 60 * kMinute;  // 2026-10-31, 00:00 MDT
  for (std::int64_t i = 0; i < 3 * 24 * 20 + 40; ++i) {
    if (i % 97 >= 90) continue;  // a 21-minute hole every ~5 hours
    StoredReading r = test::reading(site, begin + i * 3 * kMinute + jitter(random), 0.4);
    r.discharge = 2.0 + std::sin(static_cast<double>(i) / 40.0);
    if (i % 53 == 0) {
      r.discharge.reset();
      r.flags = Flag::out_of_range;
    }
    out.push_back(r);
  }
  return out;
}

std::vector<StoredReading> slice(const std::vector<StoredReading>& all, std::size_t from,
                                 std::size_t to) {
  return {all.begin() + static_cast<std::ptrdiff_t>(from),
          all.begin() + static_cast<std::ptrdiff_t>(to)};
}

// One batch as the ingest commits it: the keeper's owner first asks the store whether the stored
// readings changed since it last looked (another connection's commit) and makes the keeper forget
// its copy if so.
void commit_batch(Store& store, DailyKeeper& keeper, ReadingsMark& seen,
                  const std::vector<StoredReading>& readings) {
  auto batch = store.begin();
  REQUIRE(batch.has_value());
  auto changed = store.stored_readings_changed(seen);
  REQUIRE(changed.has_value());
  if (*changed) keeper.forget();
  for (const auto& r : readings) {
    auto inserted = batch->insert(r);
    REQUIRE(inserted.has_value());
    if (inserted->outcome == InsertOutcome::stored) {
      keeper.stored(r.site, {r.time_ms, r.discharge, r.flags});
    }
  }
  REQUIRE(keeper.update(store, *batch).has_value());
  REQUIRE(batch->commit().has_value());
}

std::vector<DayFigures> stored_figures(Store& store, SiteKey site) {
  auto days = store.daily().days(site, Day(2000, 1, 1), Day(2100, 1, 1));
  REQUIRE(days.has_value());
  return *days;
}

std::vector<DayFigures> full_recomputation(Store& store, SiteKey site, const DayCalendar& calendar,
                                           const DayRules& rules) {
  auto readings = store.readings().day_readings(site, std::numeric_limits<std::int64_t>::min(),
                                                std::numeric_limits<std::int64_t>::max());
  REQUIRE(readings.has_value());
  return compute_days(*readings, calendar, rules);
}

void check_equal(const std::vector<DayFigures>& got, const std::vector<DayFigures>& want) {
  REQUIRE(got.size() == want.size());
  for (std::size_t i = 0; i < got.size(); ++i) {
    CAPTURE(format_day(want[i].day));
    CHECK(got[i] == want[i]);  // exactly: SQLite keeps doubles bit for bit
  }
}

// A database with one site and a keeper for it, as the tests below start.
struct KeptSite {
  test::TempDir dir;
  Store store = test::open_store(dir.db());
  test::Site site = test::add_site(store, "gauge");
  Config config = denver_config();
  DayRules rules = rules_for(config.sites.front(), config.daily);
  ReadingsMark seen;  // what the keeper's copy was taken from (commit_batch)
  std::optional<DailyKeeper> keeper = make_keeper();

  std::optional<DailyKeeper> make_keeper() {
    REQUIRE(store.stored_readings_changed(seen).has_value());
    auto made = DailyKeeper::create(config);
    REQUIRE(made.has_value());
    REQUIRE(made->add_site(store, site.key, config.sites.front()).has_value());
    return std::move(*made);
  }
};

TEST_CASE_FIXTURE(KeptSite,
                  "late readings and late flags: the kept figures equal a full recomputation") {
  const auto all = sample(site);
  // First in time order every reading but each 7th; then the held-back ones newest first, in three
  // late batches; then spike flags on readings committed long before.
  std::vector<StoredReading> on_time;
  std::vector<StoredReading> late;
  for (std::size_t i = 0; i < all.size(); ++i) (i % 7 == 3 ? late : on_time).push_back(all[i]);
  std::reverse(late.begin(), late.end());
  for (std::size_t start = 0; start < on_time.size(); start += 400) {
    const auto end = std::min(start + 400, on_time.size());
    commit_batch(store, *keeper, seen, slice(on_time, start, end));
  }
  check_equal(stored_figures(store, site.key),
              full_recomputation(store, site.key, keeper->calendar(), rules));
  const std::size_t third = late.size() / 3;
  commit_batch(store, *keeper, seen, slice(late, 0, third));
  commit_batch(store, *keeper, seen, slice(late, third, 2 * third));
  commit_batch(store, *keeper, seen, slice(late, 2 * third, late.size()));
  {
    auto batch = store.begin();
    REQUIRE(batch.has_value());
    for (std::size_t i = 5; i < all.size(); i += 61) {
      REQUIRE(batch->add_flags(site.key, all[i].time_ms, Flag::spike).has_value());
      keeper->flagged(site.key, all[i].time_ms, Flag::spike);
    }
    REQUIRE(keeper->update(store, *batch).has_value());
    REQUIRE(batch->commit().has_value());
  }
  const auto kept = stored_figures(store, site.key);
  check_equal(kept, full_recomputation(store, site.key, keeper->calendar(), rules));
  REQUIRE(kept.size() >= 3);
  // The bridged spikes and the holes did change the figures: these are not vacuous.
  CHECK(std::any_of(kept.begin(), kept.end(), [](const DayFigures& d) {
    return std::any_of(d.flag_counts.begin(), d.flag_counts.end(),
                       [](const FlagCount& c) { return c.flag == Flag::spike; });
  }));
  CHECK(std::any_of(kept.begin(), kept.end(), [](const DayFigures& d) { return d.coverage < 1; }));
  CHECK(std::any_of(kept.begin(), kept.end(),
                    [](const DayFigures& d) { return d.length_ms() == 25 * 60 * kMinute; }));

  SUBCASE("recompute_site stores the same figures") {
    auto batch = store.begin();
    REQUIRE(batch.has_value());
    REQUIRE(recompute_site(store, *batch, site.key, keeper->calendar(), rules, "x").has_value());
    REQUIRE(batch->commit().has_value());
    check_equal(stored_figures(store, site.key), kept);
  }
  SUBCASE("new settings: the figures are recomputed when the site is added again") {
    Config wider = config;
    wider.sites.front().checks.max_gap_s = 3600;  // the 21-minute holes are now bridged
    auto again = DailyKeeper::create(wider);
    REQUIRE(again.has_value());
    REQUIRE(again->add_site(store, site.key, wider.sites.front()).has_value());
    const DayRules wider_rules = rules_for(wider.sites.front(), wider.daily);
    const auto recomputed = stored_figures(store, site.key);
    check_equal(recomputed, full_recomputation(store, site.key, again->calendar(), wider_rules));
    CHECK(recomputed != kept);
    auto current = figures_current(store, site.key,
                                   settings_text(again->calendar(), wider.units, wider_rules));
    REQUIRE(current.has_value());
    CHECK(*current);
  }
}

TEST_CASE_FIXTURE(
    KeptSite, "in-order batches that flag readings of the batch before: equal after every batch") {
  // Readings in time order are taken from the keeper's copy of the open day (its tail) rather than
  // read back; flags added to readings of an earlier batch must reach that copy too, and a
  // reading held back from one batch and sent with the next (late, inside the copy's period) must
  // not be missed.
  const auto all = sample(site);
  const std::size_t step = 37;
  for (std::size_t start = 0; start < all.size(); start += step) {
    const auto end = std::min(start + step, all.size());
    auto batch = store.begin();
    REQUIRE(batch.has_value());
    if (start >= step) {  // a spike found on the batch before, as the checks would report it
      const auto& earlier = all[start - step / 2];
      REQUIRE(batch->add_flags(site.key, earlier.time_ms, Flag::spike).has_value());
      keeper->flagged(site.key, earlier.time_ms, Flag::spike);
    }
    // The 7th reading from the end of each batch (but the last) is held back to the next.
    std::vector<StoredReading> readings;
    for (std::size_t i = start; i < end; ++i) {
      if (i + 7 != end || end == all.size()) readings.push_back(all[i]);
    }
    if (start >= step) readings.push_back(all[start - 7]);
    for (const auto& r : readings) {
      auto inserted = batch->insert(r);
      REQUIRE_MESSAGE(inserted.has_value(), inserted.error().message);
      keeper->stored(r.site, {r.time_ms, r.discharge, r.flags});
    }
    REQUIRE(keeper->update(store, *batch).has_value());
    REQUIRE(batch->commit().has_value());
    CAPTURE(start);
    check_equal(stored_figures(store, site.key),
                full_recomputation(store, site.key, keeper->calendar(), rules));
  }
}

TEST_CASE_FIXTURE(KeptSite, "readings another connection committed in between are not missed") {
  // The keeper takes a batch's readings that are newer than everything stored from memory; a
  // second writer's readings in between must make it read the database again.
  const auto all = sample(site);
  commit_batch(store, *keeper, seen, slice(all, 0, 100));
  {
    Store other = test::open_store(dir.db());  // another writer on the same file
    auto batch = other.begin();
    REQUIRE(batch.has_value());
    for (const auto& r : slice(all, 100, 110)) REQUIRE(batch->insert(r).has_value());
    REQUIRE(batch->commit().has_value());
  }
  commit_batch(store, *keeper, seen, slice(all, 110, 200));
  check_equal(stored_figures(store, site.key),
              full_recomputation(store, site.key, keeper->calendar(), rules));
}

TEST_CASE_FIXTURE(KeptSite, "a failure while updating the figures stores nothing of the batch") {
  const auto all = sample(site);
  const auto first = slice(all, 0, 200);
  commit_batch(store, *keeper, seen, first);
  const auto before = stored_figures(store, site.key);

  // Count the steps of a successful update of the next batch, then fail each of them in turn.
  const auto second = slice(all, 200, 260);
  for (int n = 1;; ++n) {
    CAPTURE(n);
    bool updated = false;
    {
      auto batch = store.begin();
      REQUIRE(batch.has_value());
      for (const auto& r : second) {
        REQUIRE(batch->insert(r).has_value());
        keeper->stored(r.site, {r.time_ms, r.discharge, r.flags});
      }
      store.set_step_hook_for_testing(test::FailNthStep(n, SQLITE_IOERR));
      updated = keeper->update(store, *batch).has_value();
      store.set_step_hook_for_testing({});
      if (updated) {
        REQUIRE(batch->commit().has_value());
      } else {
        // Inside the failed transaction the readings are there; the caller's duty is not to
        // commit, and the batch rolls back as it goes out of scope.
        CHECK(*store.readings().count(site.key) == 260);
      }
    }
    if (updated) break;  // n is past the last step: every failure point has been tried
    CHECK(*store.readings().count(site.key) == 200);
    check_equal(stored_figures(store, site.key), before);
    REQUIRE(n < 10000);
  }
  CHECK(*store.readings().count(site.key) == 260);
}

}  // namespace
}  // namespace stagewell::daily
