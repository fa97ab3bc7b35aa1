// Shipping the store's record to the PostgreSQL warehouse (docs/warehouse.md): one warehouse for
// many plants, each a stagewell service with its own SQLite store. The warehouse's schema is
// created and migrated here (schema/warehouse/NNN_name.sql, compiled in).
//
// Exactly once in effect: a batch read from the store's queue (shipping_queue.hpp) is written in
// one warehouse transaction of upserts, keyed by plant and each row's own key, and only then
// recorded as shipped in the store. Whatever stops in between (a kill, a lost connection, a
// restarted server), the batch is sent again and replaces its own copy.
#pragma once

#include <cstdint>
#include <memory>
#include <optional>
#include <string>

#include "stagewell/config.hpp"
#include "stagewell/result.hpp"

namespace stagewell {

class Store;

// The warehouse schema version this program writes: its last migration's number.
int warehouse_schema_version();

// What `stagewell warehouse check` reports of the server.
struct WarehouseInfo {
  std::string target;                 // "database flows on /run/pg:5432 as plant_writer"
  std::string server_version;         // "15.6"
  std::optional<int> schema_version;  // empty: the schema is not created yet
};

// One step of shipping.
struct ShipStep {
  std::size_t readings = 0;   // readings sent
  std::size_t rows = 0;       // other rows sent or deleted
  bool started_over = false;  // the warehouse is new to this store: its whole record is queued
  bool moved = false;         // the queue moved on (a batch was shipped, if only log entries)
  std::optional<std::int64_t> shipped_ms;  // when the warehouse committed it (ms since epoch)
  bool idle() const { return !moved; }
};

class Shipper {
 public:
  // Ships `store`'s queue to `spec`'s warehouse. REQUIRES: `store` is read-write, tracked
  // (ShippingQueue::track(true)) and outlives the shipper; used from one thread at a time.
  Shipper(WarehouseSpec spec, Store& store);
  ~Shipper();
  Shipper(const Shipper&) = delete;
  Shipper& operator=(const Shipper&) = delete;

  // Connects when not connected (migrating the schema, claiming the plant, pairing the store
  // with the warehouse), then sends one batch of at most `max_readings` readings. On any failure
  // the connection is dropped and the next call connects again; nothing is lost.
  Result<ShipStep> step(std::size_t max_readings = 10000);
  bool connected() const;
  std::string target() const;  // empty until connected once
  // From any thread: cancels the warehouse statement in progress, and every later step fails
  // (ErrorKind::cancelled) without shipping.
  void cancel();

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

// Connects to `spec`'s warehouse and reads its server and schema versions, changing nothing.
Result<WarehouseInfo> inspect_warehouse(const WarehouseSpec& spec);

}  // namespace stagewell
