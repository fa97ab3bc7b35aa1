// ReadingsTable::scan_day_readings hands over exactly the readings day_readings() returns — the
// site's, in [from, to] both included, in time order, discharge NULL as no value, flags as
// stored — a bounded stretch at a time; a failure of the caller's code reaches the caller and
// leaves the store usable; and the aggregate behind it gives SQL typed elsewhere nothing.
#include "store/day_readings_scan.hpp"

#include <doctest/doctest.h>

#include <limits>
#include <stdexcept>
#include <vector>

#include "raw_connection.hpp"
#include "stagewell/store.hpp"
#include "store_test_support.hpp"

namespace stagewell {
namespace {

using daily::DayReading;
using test::TempDir;

constexpr std::int64_t kMinute = 60'000;

// A database with 10,000 one-minute readings of `site` (more than one stretch), some without
// discharge and some flagged, and a few of `other` in between.
struct Readings {
  TempDir dir;
  Store store = test::open_store(dir.db());
  test::Site site = test::add_site(store, "raceway-a");
  test::Site other = test::add_site(store, "feeder-canal");

  Readings() {
    auto batch = store.begin();
    REQUIRE(batch.has_value());
    for (std::int64_t i = 0; i < 10'000; ++i) {
      StoredReading r = test::reading(site, 1'000'000 + i * kMinute, 0.5 + 1e-4 * i);
      if (i % 97 == 0) {
        r.discharge.reset();
        r.flags = Flag::out_of_range;
      } else if (i % 31 == 0) {
        r.flags = Flags(Flag::spike) |= Flag::unsteady;
      }
      REQUIRE(batch->insert(r).has_value());
      if (i % 1000 == 0) REQUIRE(batch->insert(test::reading(other, r.time_ms, 9.0)).has_value());
    }
    REQUIRE(batch->commit().has_value());
  }
};

struct Scanned {
  std::vector<DayReading> readings;
  std::vector<std::size_t> stretches;  // the size of each stretch handed over
};

Scanned scan(Store& store, SiteKey site, std::int64_t from_ms, std::int64_t to_ms) {
  Scanned out;
  auto done = store.readings().scan_day_readings(
      site, from_ms, to_ms, [&](std::span<const DayReading> stretch) {
        out.stretches.push_back(stretch.size());
        out.readings.insert(out.readings.end(), stretch.begin(), stretch.end());
      });
  REQUIRE_MESSAGE(done.has_value(), done.error().message);
  return out;
}

void check_same(const std::vector<DayReading>& got, const std::vector<DayReading>& want) {
  REQUIRE(got.size() == want.size());
  for (std::size_t i = 0; i < got.size(); ++i) {
    CAPTURE(i);
    CHECK(got[i].time_ms == want[i].time_ms);
    CHECK(got[i].discharge == want[i].discharge);
    CHECK(got[i].flags == want[i].flags);
  }
}

TEST_CASE("a scan hands over what day_readings returns, a bounded stretch at a time") {
  Readings db;
  auto& [dir, store, site, other] = db;

  constexpr auto kMin = std::numeric_limits<std::int64_t>::min();
  constexpr auto kMax = std::numeric_limits<std::int64_t>::max();
  // The bounds are included: the 11th to the 9,000th reading.
  for (const auto& [from, to] :
       {std::pair{kMin, kMax}, std::pair{1'000'000 + 10 * kMinute, 1'000'000 + 8'999 * kMinute},
        std::pair{kMin, std::int64_t{0}}}) {
    CAPTURE(from);
    CAPTURE(to);
    auto want = store.readings().day_readings(site.key, from, to);
    REQUIRE(want.has_value());
    const Scanned got = scan(store, site.key, from, to);
    check_same(got.readings, *want);
    for (const std::size_t stretch : got.stretches) {
      CHECK(stretch > 0);
      CHECK(stretch <= 4096);  // memory stays bounded whatever the range
    }
  }
  const Scanned all = scan(store, site.key, kMin, kMax);
  CHECK(all.readings.size() == 10'000);
  CHECK(all.stretches.size() == 3);                    // 4096 + 4096 + 1808
  CHECK_FALSE(all.readings[0].discharge.has_value());  // i = 0: out_of_range, NULL discharge
  CHECK(all.readings[31].flags == (Flags(Flag::spike) |= Flag::unsteady));
  // The other site's readings are its own.
  CHECK(scan(store, other.key, kMin, kMax).readings.size() == 10);

  // A read-only store (as the reports open it) reads the same.
  auto reader = Store::open_read_only(dir.db());
  REQUIRE(reader.has_value());
  check_same(scan(*reader, site.key, kMin, kMax).readings, all.readings);
}

TEST_CASE("what the caller's code throws reaches the caller, and the store reads on") {
  Readings db;
  auto& [dir, store, site, other] = db;

  int calls = 0;
  CHECK_THROWS_AS((void)store.readings().scan_day_readings(site.key, 0,
                                                           std::numeric_limits<std::int64_t>::max(),
                                                           [&](std::span<const DayReading>) {
                                                             if (++calls == 2)
                                                               throw std::length_error("full");
                                                           }),
                  std::length_error);
  CHECK(calls == 2);  // nothing more was handed over after it threw
  // The statement was stopped and reset: the store answers, and a write can follow.
  CHECK(scan(store, site.key, 0, std::numeric_limits<std::int64_t>::max()).readings.size() ==
        10'000);
  auto batch = store.begin();
  REQUIRE(batch.has_value());
  REQUIRE(batch->insert(test::reading(site, 0, 0.3)).has_value());
  CHECK(batch->commit().has_value());
}

TEST_CASE("the aggregate gives SQL typed elsewhere an error, never memory") {
  Readings db;
  // An analyst's connection does not have it.
  auto analyst = test::raw_connection(db.dir.db());
  CHECK_FALSE(
      analyst
          ->query_int64("SELECT stagewell_day_readings(time_ms, discharge, flags, band_bp, 1) "
                        "FROM readings")
          .has_value());
  // Even where it is registered, a number or text in place of the program's bound pointer is
  // NULL to it (SQLite's pointer-passing interface): the query fails, naming why.
  REQUIRE(store_detail::add_day_readings_function(*analyst).has_value());
  for (const char* sql :
       {"SELECT stagewell_day_readings(time_ms, discharge, flags, band_bp, 140737488355328) "
        "FROM readings",
        "SELECT stagewell_day_readings(time_ms, discharge, flags, band_bp, 'x') "
        "FROM readings"}) {
    CAPTURE(sql);
    auto result = analyst->query_int64(sql);
    REQUIRE_FALSE(result.has_value());
    CHECK(result.error().message.find("no scan was bound") != std::string::npos);
  }
  // Nor can a view in the file use it (SQLITE_DIRECTONLY), whoever wrote the view.
  REQUIRE(analyst
              ->exec("CREATE VIEW sneaky AS SELECT stagewell_day_readings(time_ms, "
                     "discharge, flags, band_bp, NULL) AS x FROM readings")
              .has_value());
  auto through_view = analyst->query_int64("SELECT x FROM sneaky");
  REQUIRE_FALSE(through_view.has_value());
  CHECK(through_view.error().message.find("unsafe use") != std::string::npos);
}

}  // namespace
}  // namespace stagewell
