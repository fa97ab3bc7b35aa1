// The analyst views `discharge` and `rejects`: their exact columns and text formats, and the
// flag_names table against flags.hpp.
#include <doctest/doctest.h>

#include <string>
#include <vector>

#include "raw_connection.hpp"
#include "stagewell/flags.hpp"
#include "stagewell/store.hpp"
#include "store_test_support.hpp"

namespace stagewell {
namespace {

using test::query_int;
using test::query_text;
using test::raw_connection;
using test::TempDir;

std::vector<std::string> column_names(sqlite::Connection& connection, const std::string& view) {
  auto info = connection.prepare("SELECT name FROM pragma_table_info('" + view + "') ORDER BY cid");
  REQUIRE(info.has_value());
  std::vector<std::string> names;
  while (info->step().value()) names.push_back(info->column_text(0));
  return names;
}

TEST_CASE("the views have exactly the contracted columns") {
  TempDir dir;
  { test::open_store(dir.db()); }
  auto raw = raw_connection(dir.db());
  // time_ms at the end of each view with a time, rejects' kind: schema 8; the band's ends and
  // the Jones estimate after it, the daily band volumes and the gaugings: schema 9.
  CHECK(column_names(*raw, "discharge") ==
        std::vector<std::string>{"site", "time", "unix_time", "stage", "depth", "discharge",
                                 "flags", "version", "time_ms", "discharge_low", "discharge_high",
                                 "discharge_jones"});
  CHECK(column_names(*raw, "daily") ==
        std::vector<std::string>{"site", "day", "volume", "mean_discharge", "min_discharge",
                                 "min_time", "max_discharge", "max_time", "coverage", "readings",
                                 "flagged", "volume_low", "volume_high"});
  CHECK(column_names(*raw, "gaugings") ==
        std::vector<std::string>{"site", "time", "stage", "measured", "computed",
                                 "difference_percent", "implied_roughness", "method", "note",
                                 "version", "time_ms"});
  CHECK(column_names(*raw, "rejects") == std::vector<std::string>{"source", "position", "raw",
                                                                  "reason", "received", "kind",
                                                                  "time_ms"});
  CHECK(column_names(*raw, "changes") ==
        std::vector<std::string>{"at", "site", "period_from", "period_to", "config_before",
                                 "config_after", "readings_changed", "max_discharge_change",
                                 "max_daily_volume_change", "finished", "time_ms"});
  CHECK(column_names(*raw, "alarms") == std::vector<std::string>{"site", "kind", "raised",
                                                                 "cleared", "value", "threshold",
                                                                 "time_ms"});
  CHECK(column_names(*raw, "site_details") ==
        std::vector<std::string>{"site", "name", "time_zone", "stage_unit", "length_unit",
                                 "discharge_unit", "volume_unit", "latitude", "longitude",
                                 "datum"});
  // `changes` is the old name of `recomputations` (schema/005): both answer the same columns.
  CHECK(column_names(*raw, "recomputations") == column_names(*raw, "changes"));
}

TEST_CASE("discharge view: RFC 3339 UTC time text and unix_time in seconds") {
  // Each instant and its text from Python's datetime (Debian's /usr/bin/python3):
  //   datetime(1970,1,1,tzinfo=timezone.utc) + timedelta(milliseconds=ms)
  // and the seconds from ms / 1000.0. "Z" and fractional seconds only with milliseconds are the
  // contract; RFC 3339 allows both.
  struct Case {
    std::int64_t ms;
    const char* text;
    double seconds;
  };
  const Case cases[] = {
      {1'700'000'000'000, "2023-11-14T22:13:20Z", 1700000000.0},
      {1'700'000'000'250, "2023-11-14T22:13:20.250Z", 1700000000.25},
      {1'700'000'000'005, "2023-11-14T22:13:20.005Z", 1700000000.005},
      {1'772'345'700'000, "2026-03-01T06:15:00Z", 1772345700.0},
      {1'709'208'000'000, "2024-02-29T12:00:00Z", 1709208000.0},  // a leap day
      {0, "1970-01-01T00:00:00Z", 0.0},
      {-1, "1969-12-31T23:59:59.999Z", -0.001},  // before the epoch: seconds floored
      {-1500, "1969-12-31T23:59:58.500Z", -1.5},
      {253'402'300'799'999, "9999-12-31T23:59:59.999Z", 253402300799.999},
  };
  TempDir dir;
  Store store = test::open_store(dir.db());
  const auto site = test::add_site(store, "raceway-a");
  // Each case gets its own stage (its index), to find its row without using the time columns.
  auto batch = store.begin();
  for (std::size_t i = 0; i < std::size(cases); ++i) {
    auto inserted = batch->insert(test::reading(site, cases[i].ms, static_cast<double>(i)));
    REQUIRE_MESSAGE(inserted.has_value(), inserted.error().message);
  }
  REQUIRE(batch->commit().has_value());

  auto raw = raw_connection(dir.db());
  for (std::size_t i = 0; i < std::size(cases); ++i) {
    const auto& c = cases[i];
    CAPTURE(c.ms);
    auto select = raw->prepare(
        "SELECT time, unix_time, typeof(unix_time) FROM discharge "
        "WHERE stage = " +
        std::to_string(i));
    REQUIRE(select.has_value());
    REQUIRE(select->step().value());
    CHECK(select->column_text(0) == c.text);
    CHECK(select->column_double(1) == c.seconds);
    CHECK(select->column_text(2) == "real");
  }
  CHECK(query_int(*raw, "SELECT count(*) FROM discharge") ==
        static_cast<std::int64_t>(std::size(cases)));
}

TEST_CASE("discharge view: site id, values, NULL discharge, flags text") {
  TempDir dir;
  Store store = test::open_store(dir.db());
  const auto site = test::add_site(store, "raceway-a");
  auto batch = store.begin();
  auto clean = test::reading(site, 1000, 0.5);
  REQUIRE(batch->insert(clean).has_value());
  auto two = test::reading(site, 2000, 0.5);
  two.flags = Flags(static_cast<std::uint32_t>(Flag::spike) |
                    static_cast<std::uint32_t>(Flag::out_of_range));
  two.discharge.reset();
  REQUIRE(batch->insert(two).has_value());
  auto all = test::reading(site, 3000, 0.5);
  all.flags = Flags(0x7ffu);  // the eleven flags of flags.hpp, bits 0..10
  REQUIRE(batch->insert(all).has_value());
  REQUIRE(batch->commit().has_value());

  auto raw = raw_connection(dir.db());
  CHECK(query_text(*raw, "SELECT site FROM discharge WHERE unix_time = 1") == "raceway-a");
  CHECK(query_text(*raw, "SELECT stage FROM discharge WHERE unix_time = 1") == "0.5");
  CHECK(query_text(*raw, "SELECT discharge FROM discharge WHERE unix_time = 1") == "1.0");
  CHECK(query_text(*raw, "SELECT typeof(discharge) FROM discharge WHERE unix_time = 2") == "null");
  // Clean: the empty string, not NULL.
  CHECK(
      query_text(*raw, "SELECT typeof(flags) || ':' || flags FROM discharge WHERE unix_time = 1") ==
      "text:");
  // Names in the declaration order of flags.hpp, whatever order they were set in.
  CHECK(query_text(*raw, "SELECT flags FROM discharge WHERE unix_time = 2") ==
        "out_of_range,spike");
  CHECK(query_text(*raw, "SELECT flags FROM discharge WHERE unix_time = 3") ==
        "below_zero_flow,above_section,surcharged,supercritical,out_of_range,spike,unsteady,"
        "flatline,gap,late,future");
}

TEST_CASE("a time range on time_ms searches the readings' primary key") {
  TempDir dir;
  Store store = test::open_store(dir.db());
  const auto site = test::add_site(store, "raceway-a");
  auto batch = store.begin();
  for (int i = 0; i < 100; ++i) {
    REQUIRE(batch->insert(test::reading(site, 1'700'000'000'000 + i * 60'000, 0.5)).has_value());
  }
  REQUIRE(batch->commit().has_value());
  auto raw = raw_connection(dir.db());
  // time_ms is the stored integer.
  CHECK(query_int(*raw, "SELECT min(time_ms) FROM discharge") == 1'700'000'000'000);
  CHECK(query_int(*raw,
                  "SELECT count(*) FROM discharge WHERE site = 'raceway-a' AND time_ms "
                  "BETWEEN 1700000060000 AND 1700000180000") == 3);
  // SQLite's EXPLAIN QUERY PLAN (sqlite.org, "EXPLAIN QUERY PLAN"): a SEARCH of readings whose
  // key constraint names time_ms, not a search on site_key alone.
  auto plan = raw->prepare(
      "EXPLAIN QUERY PLAN SELECT discharge FROM discharge WHERE site = 'raceway-a' AND time_ms "
      "BETWEEN 1700000060000 AND 1700000180000");
  REQUIRE(plan.has_value());
  std::string details;
  while (plan->step().value()) details += plan->column_text(3) + "\n";
  CAPTURE(details);
  CHECK(details.find("SEARCH r USING PRIMARY KEY (site_key=? AND time_ms>? AND time_ms<?)") !=
        std::string::npos);
}

TEST_CASE("rejects: kind is the reason's category, reason the whole text") {
  TempDir dir;
  Store store = test::open_store(dir.db());
  auto batch = store.begin();
  REQUIRE(batch
              ->add_reject({"a.csv", "line 3", "g1,x,1", "bad_time: 'x' is not a timestamp",
                            1'700'000'000'000})
              .has_value());
  REQUIRE(batch
              ->add_reject({"a.csv", "line 4", "g1,2026,y", "bad_stage: 'y' is not a number",
                            1'700'000'000'500})
              .has_value());
  REQUIRE(batch->commit().has_value());
  auto raw = raw_connection(dir.db());
  CHECK(query_text(*raw,
                   "SELECT group_concat(kind, ',') FROM (SELECT kind FROM rejects ORDER BY "
                   "time_ms)") == "bad_time,bad_stage");
  CHECK(query_text(*raw, "SELECT reason FROM rejects WHERE kind = 'bad_stage'") ==
        "bad_stage: 'y' is not a number");
  CHECK(query_int(*raw, "SELECT time_ms FROM rejects WHERE kind = 'bad_stage'") ==
        1'700'000'000'500);
}

TEST_CASE("flag_names matches flags.hpp") {
  TempDir dir;
  { test::open_store(dir.db()); }
  auto raw = raw_connection(dir.db());
  auto rows = raw->prepare("SELECT bit, name FROM flag_names ORDER BY bit");
  REQUIRE(rows.has_value());
  const auto& flags = all_flags();
  std::size_t i = 0;
  while (rows->step().value()) {
    REQUIRE(i < flags.size());
    CHECK(rows->column_int64(0) == static_cast<std::int64_t>(flags[i]));
    CHECK(rows->column_text(1) == name(flags[i]));
    ++i;
  }
  CHECK(i == flags.size());
}

TEST_CASE("rejects view: columns, received text; long raw lines are cut at 4 KiB") {
  TempDir dir;
  Store store = test::open_store(dir.db());
  auto batch = store.begin();
  REQUIRE(batch
              ->add_reject({.source = "/data/gauge.csv",
                            .position = "gauge.csv:123",
                            .raw = "raceway-a,2026-03-01T06:15,abc",
                            .reason = "the stage \"abc\" is not a number",
                            .received_ms = 1'700'000'000'250})
              .has_value());
  const std::string huge(10'000, 'x');
  REQUIRE(batch->add_reject({"tcp:192.0.2.7", "line 17", huge, "line too long", 0}).has_value());
  // A two-byte character straddling byte 4096 is dropped whole, so the text stays UTF-8.
  const std::string straddle = std::string(4095, 'a') + "\xc3\xa9" + std::string(100, 'b');
  REQUIRE(batch->add_reject({"s", "line 18", straddle, "r", 0}).has_value());
  // A four-byte character starting at byte 4094 is dropped whole too.
  const std::string four = std::string(4094, 'a') + "\xf0\x9f\x98\x80" + "b";
  REQUIRE(batch->add_reject({"s", "line 19", four, "r", 0}).has_value());
  const std::string exact(4096, 'y');
  REQUIRE(batch->add_reject({"s", "line 20", exact, "r", 0}).has_value());
  REQUIRE(batch->commit().has_value());

  auto raw = raw_connection(dir.db());
  auto first = raw->prepare(
      "SELECT source, position, raw, reason, received FROM rejects "
      "WHERE position = 'gauge.csv:123'");
  REQUIRE(first.has_value());
  REQUIRE(first->step().value());
  CHECK(first->column_text(0) == "/data/gauge.csv");
  CHECK(first->column_text(2) == "raceway-a,2026-03-01T06:15,abc");
  CHECK(first->column_text(3) == "the stage \"abc\" is not a number");
  CHECK(first->column_text(4) == "2023-11-14T22:13:20.250Z");  // Python's datetime, as above

  auto bytes = [&](const std::string& position) {
    return query_int(
        *raw, "SELECT length(CAST(raw AS BLOB)) FROM rejects WHERE position = '" + position + "'");
  };
  CHECK(bytes("line 17") == 4096);
  CHECK(bytes("line 18") == 4095);
  CHECK(bytes("line 19") == 4094);
  CHECK(bytes("line 20") == 4096);
  CHECK(query_int(*raw, "SELECT raw_bytes FROM rejected_lines WHERE position = 'line 17'") ==
        10'000);
  CHECK(query_text(*raw, "SELECT received FROM rejects WHERE position = 'line 17'") ==
        "1970-01-01T00:00:00Z");
}

}  // namespace
}  // namespace stagewell
