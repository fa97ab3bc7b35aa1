// Alarm events in the database: the `alarms` view's exact columns and text, open and cleared
// alarms, and at most one open alarm per site and kind.
#include <doctest/doctest.h>

#include <optional>
#include <string>
#include <vector>

#include "../store/raw_connection.hpp"
#include "../store/store_test_support.hpp"
#include "stagewell/alarms.hpp"

namespace stagewell::alarms {
namespace {

using test::raw_connection;
using test::TempDir;

// 2026-05-14T06:15:00Z and 2026-05-14T06:35:00.250Z in ms since the epoch; the texts are
// Python's datetime(2026,5,14,6,0,tzinfo=timezone.utc) + timedelta(...) (Debian's
// /usr/bin/python3), written as the `discharge` view writes times ("Z", milliseconds only when
// there are some).
constexpr std::int64_t kRaised = 1'778'738'400'000 + 15 * 60'000;
constexpr std::int64_t kCleared = 1'778'738'400'000 + 35 * 60'000 + 250;

struct Row {
  std::string site, kind, raised;
  std::optional<std::string> cleared;
  double value, threshold;
};

std::vector<Row> view_rows(const std::filesystem::path& db) {
  auto raw = raw_connection(db);
  auto select = raw->prepare(
      "SELECT site, kind, raised, cleared, value, threshold FROM alarms ORDER BY raised");
  REQUIRE(select.has_value());
  std::vector<Row> rows;
  while (select->step().value()) {
    rows.push_back(
        {select->column_text(0), select->column_text(1), select->column_text(2),
         select->column_is_null(3) ? std::nullopt : std::optional(select->column_text(3)),
         select->column_double(4), select->column_double(5)});
  }
  return rows;
}

void write(Store& store, SiteKey site, const AlarmEvent& event) {
  auto batch = store.begin();
  REQUIRE(batch.has_value());
  auto recorded = store.alarms().record(*batch, site, event);
  REQUIRE_MESSAGE(recorded.has_value(), recorded.error().message);
  REQUIRE(batch->commit().has_value());
}

TEST_CASE("the alarms view has exactly the contracted columns") {
  TempDir dir;
  { test::open_store(dir.db()); }
  auto raw = raw_connection(dir.db());
  auto info = raw->prepare("SELECT name FROM pragma_table_info('alarms') ORDER BY cid");
  REQUIRE(info.has_value());
  std::vector<std::string> names;
  while (info->step().value()) names.push_back(info->column_text(0));
  CHECK(names ==
        std::vector<std::string>{"site", "kind", "raised", "cleared", "value", "threshold",
                                          "time_ms"});  // time_ms: schema 8
}

TEST_CASE("a raised alarm is open in the view until it is cleared") {
  TempDir dir;
  auto store = test::open_store(dir.db());
  const auto site = test::add_site(store, "raceway-a");
  write(store, site.key, {AlarmKind::low_flow, AlarmEvent::Change::raised, kRaised, 0.03, 0.05});

  auto rows = view_rows(dir.db());
  REQUIRE(rows.size() == 1);
  CHECK(rows[0].site == "raceway-a");
  CHECK(rows[0].kind == "low_flow");
  CHECK(rows[0].raised == "2026-05-14T06:15:00Z");
  CHECK_FALSE(rows[0].cleared.has_value());
  CHECK(rows[0].value == 0.03);
  CHECK(rows[0].threshold == 0.05);
  auto open = store.alarms().open();
  REQUIRE(open.has_value());
  REQUIRE(open->size() == 1);
  CHECK((*open)[0].kind == AlarmKind::low_flow);
  CHECK((*open)[0].raised_ms == kRaised);

  write(store, site.key, {AlarmKind::low_flow, AlarmEvent::Change::cleared, kCleared, 0.07, 0.05});
  rows = view_rows(dir.db());
  REQUIRE(rows.size() == 1);
  CHECK(rows[0].cleared == "2026-05-14T06:35:00.250Z");
  CHECK(rows[0].value == 0.03);  // what raised it, not what cleared it
  CHECK(store.alarms().open().value().empty());
  auto kinds = store.alarms().open_kinds(site.key);
  REQUIRE(kinds.has_value());
  CHECK(kinds->empty());
}

TEST_CASE("a second open alarm of the same site and kind is refused") {
  TempDir dir;
  auto store = test::open_store(dir.db());
  const auto site = test::add_site(store, "raceway-a");
  write(store, site.key, {AlarmKind::stale, AlarmEvent::Change::raised, kRaised, 1800, 1800});
  auto batch = store.begin();
  REQUIRE(batch.has_value());
  const AlarmEvent again{AlarmKind::stale, AlarmEvent::Change::raised, kCleared, 1900, 1800};
  CHECK_FALSE(store.alarms().record(*batch, site.key, again).has_value());
  // Another kind may be open at the same time.
  const AlarmEvent low{AlarmKind::low_flow, AlarmEvent::Change::raised, kCleared, 0.01, 0.05};
  CHECK(store.alarms().record(*batch, site.key, low).has_value());
  REQUIRE(batch->commit().has_value());
  auto kinds = store.alarms().open_kinds(site.key);
  REQUIRE(kinds.has_value());
  CHECK(kinds->size() == 2);
}

}  // namespace
}  // namespace stagewell::alarms
