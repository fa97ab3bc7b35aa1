// StoreReader: opened and used on a thread other than the writer's, it reads what the writer has
// committed through its own read-only connection — the latest reading, a range with a row limit,
// daily figures, open alarms and their states, the sources' progress — and cannot write.
#include "stagewell/store_reader.hpp"

#include <doctest/doctest.h>

#include <thread>

#include "stagewell/store.hpp"
#include "store_test_support.hpp"

namespace stagewell {
namespace {

using test::TempDir;

// What the reader thread saw.
struct Seen {
  std::string error;
  std::optional<SiteKey> site;
  std::optional<SiteKey> unknown_site;
  std::optional<StoredReading> latest;
  std::vector<StoredReading> first_two;
  std::vector<daily::DayFigures> days;
  std::vector<alarms::AlarmRecord> open;
  std::vector<alarms::AlarmState> states;
  bool has_alarms = false;
  std::vector<SourceProgress> progress;
};

// Stores `value` of `result` in `out`, or the error's message in `error`.
template <typename T, typename U>
void keep(Result<T> result, U& out, std::string& error) {
  if (result) {
    out = std::move(*result);
  } else if (error.empty()) {
    error = result.error().message;
  }
}

Seen read_on_another_thread(const std::filesystem::path& db) {
  Seen seen;
  std::thread reader_thread([&] {
    auto reader = StoreReader::open(db);
    if (!reader) {
      seen.error = reader.error().message;
      return;
    }
    keep(reader->find_site("raceway-a"), seen.site, seen.error);
    keep(reader->find_site("nowhere"), seen.unknown_site, seen.error);
    if (!seen.site) return;
    keep(reader->latest_reading(*seen.site), seen.latest, seen.error);
    keep(reader->readings(*seen.site, 0, 10 * 60'000, 2), seen.first_two, seen.error);
    keep(reader->days(*seen.site, daily::Day(1970, 1, 1), daily::Day(1970, 1, 2)), seen.days,
         seen.error);
    keep(reader->open_alarms(), seen.open, seen.error);
    keep(reader->alarm_states(10), seen.states, seen.error);
    keep(reader->has_alarms(), seen.has_alarms, seen.error);
    keep(reader->progress(10), seen.progress, seen.error);
  });
  reader_thread.join();
  return seen;
}

TEST_CASE("a reader on another thread sees what the writer committed") {
  TempDir dir;
  Store store = test::open_store(dir.db());
  const auto site = test::add_site(store, "raceway-a");
  {
    auto batch = store.begin();
    REQUIRE(batch.has_value());
    for (int minute = 1; minute <= 5; ++minute) {
      REQUIRE(batch->insert(test::reading(site, minute * 60'000, 0.4 + minute / 100.0)));
    }
    daily::DayFigures figures;
    figures.day = daily::Day(1970, 1, 1);
    figures.end_ms = 86'400'000;
    figures.volume = 12.5;
    figures.readings = 5;
    figures.flagged = 1;
    figures.flag_counts = {{Flag::spike, 1}};
    REQUIRE(store.daily().write_day(*batch, site.key, figures));
    using alarms::AlarmEvent;
    using alarms::AlarmKind;
    REQUIRE(store.alarms().record(
        *batch, site.key, {AlarmKind::low_flow, AlarmEvent::Change::raised, 120'000, 0.8, 1.0}));
    REQUIRE(store.alarms().record(
        *batch, site.key, {AlarmKind::stale, AlarmEvent::Change::raised, 130'000, 900, 600}));
    REQUIRE(store.alarms().record(
        *batch, site.key, {AlarmKind::stale, AlarmEvent::Change::cleared, 180'000, 10, 600}));
    REQUIRE(batch->set_progress("/data/old.csv", {"1:2", 10, 1'000}));
    REQUIRE(batch->set_progress("/data/new.csv", {"1:3", 20, 2'000}));
    REQUIRE(batch->commit());
  }

  const Seen seen = read_on_another_thread(dir.db());
  REQUIRE_MESSAGE(seen.error.empty(), seen.error);
  REQUIRE(seen.site.has_value());
  CHECK(*seen.site == site.key);
  CHECK_FALSE(seen.unknown_site.has_value());
  REQUIRE(seen.latest.has_value());
  CHECK(seen.latest->time_ms == 300'000);
  CHECK(seen.latest->stage == 0.4 + 5 / 100.0);  // as stored
  REQUIRE(seen.first_two.size() == 2);           // the row limit
  CHECK(seen.first_two[0].time_ms == 60'000);
  CHECK(seen.first_two[1].time_ms == 120'000);
  REQUIRE(seen.days.size() == 1);
  CHECK(seen.days[0].volume == 12.5);
  CHECK(seen.days[0].flag_counts == std::vector<daily::FlagCount>{{Flag::spike, 1}});
  REQUIRE(seen.open.size() == 1);
  CHECK(seen.open[0].site == "raceway-a");
  CHECK(seen.open[0].kind == alarms::AlarmKind::low_flow);
  CHECK(seen.open[0].raised_ms == 120'000);
  REQUIRE(seen.states.size() == 2);  // by kind name: low_flow, then stale
  CHECK(seen.states[0].kind == alarms::AlarmKind::low_flow);
  CHECK(seen.states[0].open);
  CHECK(seen.states[1].kind == alarms::AlarmKind::stale);
  CHECK_FALSE(seen.states[1].open);
  CHECK(seen.has_alarms);
  REQUIRE(seen.progress.size() == 2);  // newest first
  CHECK(seen.progress[0].source == "/data/new.csv");
  CHECK(seen.progress[0].progress.updated_ms == 2'000);
  CHECK(seen.progress[1].source == "/data/old.csv");
}

TEST_CASE("a reader cannot write, and needs the database to exist") {
  TempDir dir;
  auto missing = StoreReader::open(dir.db());
  REQUIRE_FALSE(missing.has_value());
  CHECK(missing.error().kind == ErrorKind::not_found);
  { test::open_store(dir.db()); }
  auto read_only = Store::open_read_only(dir.db());
  REQUIRE(read_only.has_value());
  auto batch = read_only->begin();
  REQUIRE_FALSE(batch.has_value());
  CHECK(batch.error().kind == ErrorKind::invalid_argument);
}

}  // namespace
}  // namespace stagewell
