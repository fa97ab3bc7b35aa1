// Readings rewritten on the Ingestor's own connection (as a recomputation does in the daemon)
// while readings keep arriving in time order: after Ingestor::stored_readings_rewritten() the
// daily figures kept batch by batch equal a full recomputation from the stored readings. Without
// it the figures of the open day would mix the old discharges (kept in memory) with the new.
#include <doctest/doctest.h>

#include <cmath>
#include <limits>
#include <memory>
#include <string>
#include <vector>

#include "../store/raw_connection.hpp"
#include "../store/store_test_support.hpp"
#include "stagewell/config.hpp"
#include "stagewell/daily.hpp"
#include "stagewell/daily_keeper.hpp"
#include "stagewell/ingestor.hpp"

namespace stagewell {
namespace {

using test::TempDir;

constexpr std::int64_t kT0 = 1'778'738'400'000;  // 2026-05-14T06:00:00Z (Python datetime)
constexpr std::int64_t kMinute = 60'000;

Config config_in(const TempDir& dir) {
  const std::string text = "units: metric\ntimezone: UTC\ndatabase: " + dir.db().string() + R"(
sites:
  - id: raceway
    section: {shape: rectangular, width: 2.0, height: 1.0}
    roughness: 0.014
    slope: 0.001
)";
  auto config = parse_config(text, "test.yaml", dir.path());
  REQUIRE(config.has_value());
  return std::move(*config);
}

void feed(Ingestor& ingestor, int from_minute, int to_minute) {
  for (int m = from_minute; m < to_minute; ++m) {
    const double stage = 0.3 + 0.1 * std::sin(m / 50.0);
    REQUIRE(
        ingestor.reading({"raceway", kT0 + m * kMinute, stage, 1}, {"test", 1, "raw"}).has_value());
  }
  REQUIRE(ingestor.commit().has_value());
}

TEST_CASE("daily figures stay exact when stored readings are rewritten between batches") {
  TempDir dir;
  const Config config = config_in(dir);
  auto opened = Ingestor::open(config, IngestorOptions{}, [] { return kT0 + 86'400'000; });
  REQUIRE(opened.has_value());
  Ingestor& ingestor = **opened;
  feed(ingestor, 0, 300);  // 06:00 to 11:00 of one UTC day

  auto site = ingestor.store().sites().find("raceway");
  REQUIRE(site.has_value());
  REQUIRE(site->has_value());
  const SiteKey key = **site;

  // A stand-in for a recomputation: every stored discharge doubled, through the same store.
  {
    Store& store = ingestor.store();
    std::vector<StoredReading> stored;
    REQUIRE(store.readings()
                .range(key, std::numeric_limits<std::int64_t>::min(),
                       std::numeric_limits<std::int64_t>::max(), 1'000'000, stored)
                .has_value());
    REQUIRE(stored.size() == 300);
    auto batch = store.begin();
    REQUIRE(batch.has_value());
    for (const StoredReading& r : stored) {
      const ComputedReading doubled{r.depth, r.discharge.transform([](double q) { return 2 * q; }),
                                    r.flags, r.config};
      REQUIRE(store.readings().rewrite(*batch, key, r.time_ms, doubled).has_value());
    }
    REQUIRE(batch->commit().has_value());
  }
  feed(ingestor, 300, 600);  // the same day goes on

  auto readings = ingestor.store().readings().day_readings(
      key, std::numeric_limits<std::int64_t>::min(), std::numeric_limits<std::int64_t>::max());
  REQUIRE(readings.has_value());
  auto keeper = daily::DailyKeeper::create(config);
  REQUIRE(keeper.has_value());
  const auto want = daily::compute_days(*readings, keeper->calendar(),
                                        daily::rules_for(config.sites.front(), config.daily));
  auto got = ingestor.store().daily().days(key, daily::Day(2000, 1, 1), daily::Day(2100, 1, 1));
  REQUIRE(got.has_value());
  REQUIRE(got->size() == 1);
  REQUIRE(want.size() == 1);
  CHECK(got->front() == want.front());  // exactly: the same readings, the same arithmetic
}

TEST_CASE("readings another process stored meanwhile are the next reading's neighbours") {
  // The service stores minutes 0-99; `stagewell ingest` (another connection) back-loads 100-199;
  // then the service gets minute 200. Its neighbour is minute 199: one minute, no gap (the site's
  // max_gap is the default, 1 h). Had the service kept its own idea of the latest reading (minute
  // 99), minute 200 would be flagged `gap` (101 minutes) wrongly.
  TempDir dir;
  const Config config = config_in(dir);
  const auto now = [] { return kT0 + 86'400'000; };
  auto service = Ingestor::open(config, IngestorOptions{}, now);
  REQUIRE(service.has_value());
  feed(**service, 0, 100);
  {
    auto other = Ingestor::open(config, IngestorOptions{}, now);
    REQUIRE(other.has_value());
    feed(**other, 100, 200);
  }
  feed(**service, 200, 201);
  auto raw = test::raw_connection(dir.db());
  auto select = raw->prepare("SELECT flags FROM readings WHERE time_ms = ?1");
  REQUIRE(select.has_value());
  select->bind(1, kT0 + 200 * kMinute);
  REQUIRE(select->step().value());
  CHECK(select->column_int64(0) == 0);  // clean: no gap
  CHECK((*service)->counts().flagged_by_flag.count("gap") == 0);
}

}  // namespace
}  // namespace stagewell
