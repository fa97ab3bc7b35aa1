// The warehouse's queue in the store: what ShippingQueue::next() hands out, applied to a stand-in
// warehouse (a map keyed as the real one is: site and time for readings, the row's key for the
// others, later copies replacing earlier ones), must end equal to the store's own `discharge` and
// `rejects` views read through an independent connection — after late readings, flags added to
// shipped readings, a recomputed value, rows deleted, a batch sent but not recorded (a crash), a
// reading written between next() and shipped(), and a new warehouse. The reference is the store's
// analyst views (schema/); nothing here restates what the queue computes.
#include "stagewell/shipping_queue.hpp"

#include <doctest/doctest.h>

#include <map>

#include "raw_connection.hpp"
#include "stagewell/readings_table.hpp"
#include "stagewell/store.hpp"
#include "store_test_support.hpp"

namespace stagewell {
namespace {

using test::TempDir;

// The stand-in warehouse.
struct Warehouse {
  std::map<std::pair<std::string, std::int64_t>, ShipValues> readings;
  std::map<std::string, ShipValues> rejects;  // by reject_id

  void apply(const ShipBatch& batch) {
    for (const auto& row : batch.readings) readings[{*row[0], std::stoll(*row[1])}] = row;
    for (const auto& table : batch.tables) {
      if (table.table != ShipTable::reject) continue;
      for (const auto& row : table.rows) rejects[*row[0]] = row;
      for (const auto& key : table.gone) rejects.erase(*key[0]);
    }
  }
};

// The `discharge` view's rows, as the queue ships them (site, time_ms, stage, depth, discharge,
// flags, version, ...), read by an analyst's connection.
std::map<std::pair<std::string, std::int64_t>, ShipValues> view_readings(
    const std::filesystem::path& db) {
  auto raw = test::raw_connection(db);
  auto select = raw->cached(
      "SELECT site, time_ms, stage, depth, discharge, flags, version, discharge_low, "
      "discharge_high, discharge_jones FROM discharge");
  REQUIRE(select.has_value());
  std::map<std::pair<std::string, std::int64_t>, ShipValues> rows;
  for (;;) {
    auto row = (*select)->step();
    REQUIRE(row.has_value());
    if (!*row) break;
    ShipValues values;
    for (int i = 0; i < 10; ++i) values.push_back((*select)->column_as_text(i));
    rows[{*values[0], std::stoll(*values[1])}] = values;
  }
  return rows;
}

std::int64_t count_rejects(const std::filesystem::path& db) {
  auto raw = test::raw_connection(db);
  return test::query_int(*raw, "SELECT count(*) FROM rejects");
}

// Ships everything, as the shipper does: next, apply, shipped.
void ship_all(Store& store, Warehouse& warehouse, std::size_t max_readings = 1000) {
  for (int round = 0; round < 1000; ++round) {
    auto batch = store.shipping().next(max_readings, 100);
    REQUIRE_MESSAGE(batch.has_value(), batch.error().message);
    if (batch->empty()) return;
    warehouse.apply(*batch);
    REQUIRE(store.shipping().shipped(*batch, 1000 + round).has_value());
  }
  FAIL("the queue never emptied");
}

void insert(Store& store, const std::vector<StoredReading>& readings) {
  auto batch = store.begin();
  REQUIRE(batch.has_value());
  for (const auto& r : readings) REQUIRE(batch->insert(r).has_value());
  REQUIRE(batch->commit().has_value());
}

Reject reject(std::string_view raw) {
  return Reject{.source = "gauge.csv",
                .position = "gauge.csv:7",
                .raw = raw,
                .reason = "bad_time: not a time",
                .received_ms = 5};
}

TEST_CASE("the shipped copy ends equal to the store's views, whatever changed and in what order") {
  TempDir dir;
  auto store = test::open_store(dir.db());
  const auto canal = test::add_site(store, "canal");
  const auto weir = test::add_site(store, "weir");
  REQUIRE(store.shipping().track(true).has_value());
  auto paired = store.shipping().pair("warehouse-1", "east");
  REQUIRE(paired.has_value());
  CHECK(*paired);  // never shipped: starts from nothing

  std::vector<StoredReading> first;
  for (int i = 0; i < 500; ++i) {
    first.push_back(test::reading(canal, 60'000LL * i, 0.5 + 0.001 * i));
    first.push_back(test::reading(weir, 60'000LL * i, 1.0));
  }
  insert(store, first);
  CHECK(*store.shipping().lag_readings() == 1000);

  Warehouse warehouse;
  ship_all(store, warehouse, 300);  // several batches
  CHECK(warehouse.readings == view_readings(dir.db()));
  CHECK(*store.shipping().lag_readings() == 0);

  // Behind the positions: a late reading, flags added to a shipped one, a recomputed value.
  insert(store, {test::reading(canal, 60'000LL * 10 + 30'000, 0.7)});
  {
    auto batch = store.begin();
    REQUIRE(batch.has_value());
    REQUIRE(*batch->add_flags(weir.key, 60'000LL * 3, Flag::spike));
    REQUIRE(batch->commit().has_value());
  }
  {
    auto batch = store.begin();
    REQUIRE(batch.has_value());
    ComputedReading values{
        .depth = 0.4, .discharge = 42.0, .flags = Flags{}, .config = canal.config};
    REQUIRE(store.readings().rewrite(*batch, canal.key, 60'000LL * 20, values).has_value());
    REQUIRE(batch->commit().has_value());
  }
  CHECK(*store.shipping().lag_readings() >= 3);
  CHECK(warehouse.readings != view_readings(dir.db()));
  ship_all(store, warehouse);
  CHECK(warehouse.readings == view_readings(dir.db()));

  // A batch sent but not recorded (the process killed in between) comes again; applying it twice
  // changes nothing.
  insert(store, {test::reading(canal, 60'000LL * 600, 0.9)});
  auto sent = store.shipping().next(1000, 100);
  REQUIRE(sent.has_value());
  REQUIRE(sent->readings.size() == 1);
  warehouse.apply(*sent);
  auto again = store.shipping().next(1000, 100);
  REQUIRE(again.has_value());
  CHECK(again->readings == sent->readings);
  warehouse.apply(*again);
  // A late reading written between reading a batch and recording it is not lost.
  insert(store, {test::reading(weir, 60'000LL * 250 + 1, 1.5)});
  REQUIRE(store.shipping().shipped(*again, 2000).has_value());
  ship_all(store, warehouse);
  CHECK(warehouse.readings == view_readings(dir.db()));

  // Rejects, and their removal (a source read again from its start).
  {
    auto batch = store.begin();
    REQUIRE(batch.has_value());
    REQUIRE(batch->add_reject(reject("2026-13-01,0.5")).has_value());
    REQUIRE(batch->add_reject(reject("bad \xff\xfe bytes")).has_value());
    REQUIRE(batch->commit().has_value());
  }
  CHECK(*store.shipping().lag_rows() == 2);
  ship_all(store, warehouse);
  CHECK(warehouse.rejects.size() == 2);
  {
    auto batch = store.begin();
    REQUIRE(batch.has_value());
    REQUIRE(*batch->remove_rejects("gauge.csv") == 2);
    REQUIRE(batch->add_reject(reject("again")).has_value());
    REQUIRE(batch->commit().has_value());
  }
  ship_all(store, warehouse);
  CHECK(static_cast<std::int64_t>(warehouse.rejects.size()) == count_rejects(dir.db()));
  CHECK(warehouse.rejects.begin()->second[3] == "again");

  // The same warehouse again: nothing to do. Another (an empty one): everything again.
  CHECK_FALSE(*store.shipping().pair("warehouse-1", "east"));
  CHECK(store.shipping().next(1000, 100)->empty());
  CHECK(*store.shipping().pair("warehouse-2", "east"));
  Warehouse fresh;
  ship_all(store, fresh, 250);
  CHECK(fresh.readings == view_readings(dir.db()));
  CHECK(fresh.rejects.size() == 1);
}

TEST_CASE("nothing is logged while the store does not ship; turning it off forgets the queue") {
  TempDir dir;
  auto store = test::open_store(dir.db());
  const auto canal = test::add_site(store, "canal");
  insert(store, {test::reading(canal, 2000, 0.5), test::reading(canal, 1000, 0.4)});
  CHECK_FALSE(store.shipping().state()->has_value());
  CHECK(*store.shipping().lag_readings() == 2);  // nothing shipped
  CHECK(*store.shipping().lag_rows() == 0);

  REQUIRE(store.shipping().track(true).has_value());
  const auto id = (*store.shipping().state())->store_id;
  CHECK(id.size() == 32);
  REQUIRE(store.shipping().track(true).has_value());  // again: the same store id
  CHECK((*store.shipping().state())->store_id == id);
  REQUIRE(*store.shipping().pair("w", "east"));
  Warehouse warehouse;
  ship_all(store, warehouse);
  insert(store, {test::reading(canal, 1500, 0.45)});  // late: logged
  CHECK(*store.shipping().lag_readings() == 1);

  REQUIRE(store.shipping().track(false).has_value());
  CHECK_FALSE(store.shipping().state()->has_value());
  CHECK(*store.shipping().lag_readings() == 3);
  CHECK(*store.shipping().lag_rows() == 0);
}

}  // namespace
}  // namespace stagewell
