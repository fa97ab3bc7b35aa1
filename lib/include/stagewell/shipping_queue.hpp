// What is still to be shipped to the warehouse (schema/010_warehouse_queue.sql, docs/warehouse.md):
// the store is the queue. Each site's readings are shipped by moving a position along them; what
// changed behind a position, and every change to the small tables (daily figures, alarms, rejects,
// configuration versions, site details), is logged in the same transaction as the change. The
// shipper reads a batch, sends it to the warehouse in one transaction there, and then records it
// as shipped here: a crash in between sends the batch again, which the warehouse's upserts make
// harmless (exactly once in effect).
//
// A thin handle on its store's connection (Store::shipping()).
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "stagewell/result.hpp"
#include "stagewell/store_types.hpp"

namespace stagewell {

// One row as text in PostgreSQL's input syntax (integers in decimal, numbers as the shortest text
// that reads back as the same double); empty for NULL.
using ShipValues = std::vector<std::optional<std::string>>;

// Whether and where this store ships.
struct ShippingState {
  std::string store_id;                         // random, names this store in the warehouse
  std::optional<std::string> warehouse_id;      // the warehouse the positions belong to
  std::optional<std::string> plant;             // the plant name they were shipped under
  std::optional<std::int64_t> last_shipped_ms;  // when the warehouse last committed a shipment
};

// The tables shipped besides the readings, each with the columns its rows carry (in order):
//   daily    site, day, volume, mean_discharge, min_discharge, min_time_ms, max_discharge,
//            max_time_ms, coverage, readings, flagged, volume_low, volume_high   key: site, day
//   alarm    alarm_id, site, kind, raised_ms, cleared_ms, value, threshold, clear_value
//                                                                            key: alarm_id
//   reject   reject_id, source, position, raw, raw_bytes, reason, received_ms  key: reject_id
//   version  config_id, site, config_json, hash, created_ms                  key: config_id
//   site     site, name, time_zone, stage_unit, length_unit, discharge_unit, volume_unit,
//            latitude, longitude, datum                                      key: site
// (site: the site's id text; *_ms: ms since the epoch, UTC.)
enum class ShipTable { daily, alarm, reject, version, site };
inline constexpr ShipTable kShipTables[] = {ShipTable::daily, ShipTable::alarm, ShipTable::reject,
                                            ShipTable::version, ShipTable::site};

// One read of the queue: what the shipper sends in one warehouse transaction, and what to record
// here once the warehouse has committed it.
struct ShipBatch {
  // Readings, the columns of the `discharge` view: site, time_ms, stage, depth, discharge, flags,
  // version, discharge_low, discharge_high, discharge_jones. A reading may come twice (from a
  // position and from a logged range); the later copy is the same.
  std::vector<ShipValues> readings;
  struct TableRows {
    ShipTable table;
    std::vector<ShipValues> rows;  // to insert or replace
    std::vector<ShipValues> gone;  // keys of rows deleted here, to delete there
  };
  std::vector<TableRows> tables;  // one entry per ShipTable, in kShipTables order

  // Recorded by ShippingQueue::shipped:
  std::optional<std::int64_t> changes_done_through;  // log entries up to this id are done
  struct RangeLeft {
    std::int64_t change_id = 0;
    std::int64_t next_from_ms = 0;  // the logged range's readings before this were shipped
  };
  std::optional<RangeLeft> range_left;
  struct Position {
    SiteKey site;
    std::int64_t shipped_to_ms = 0;
  };
  std::vector<Position> positions;

  std::size_t other_rows() const;  // rows and deletions of the tables
  bool empty() const { return readings.empty() && other_rows() == 0 && !changes_done_through; }
};

class ShippingQueue : store_detail::TableHandle {
 public:
  // Turns the logging of changes on (a `warehouse:` configured), or off, forgetting every
  // position and logged change: a warehouse configured again is then sent the whole record.
  // REQUIRES: read-write, no batch open.
  Result<void> track(bool on);
  // Empty while nothing is tracked.
  Result<std::optional<ShippingState>> state();
  // Shipping goes to warehouse `warehouse_id` as `plant`. When either differs from what the
  // positions belong to, starts over: positions and log cleared, every row of the small tables
  // logged, so that the whole record is sent. True when it started over.
  // REQUIRES: tracking (track(true)), read-write, no batch open.
  Result<bool> pair(std::string_view warehouse_id, std::string_view plant);
  // The next batch: logged changes first, in their order, then each site's readings after its
  // position; at most about `max_readings` readings and `max_rows` other rows.
  // REQUIRES: tracking, no batch open.
  Result<ShipBatch> next(std::size_t max_readings, std::size_t max_rows);
  // `batch` is in the warehouse, committed there at `shipped_ms`.
  // REQUIRES: read-write, no batch open.
  Result<void> shipped(const ShipBatch& batch, std::int64_t shipped_ms);
  // Readings not yet shipped (an upper bound: one logged twice counts twice). Every stored reading
  // while nothing is tracked.
  Result<std::int64_t> lag_readings();
  // Logged rows of the small tables not yet shipped.
  Result<std::int64_t> lag_rows();

 private:
  friend class Store;
  using TableHandle::TableHandle;
};

}  // namespace stagewell
