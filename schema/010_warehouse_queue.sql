-- stagewell schema, migration 10: the queue of what is still to be shipped to a warehouse.
--
-- A service with a `warehouse:` configured ships its record to PostgreSQL (docs/warehouse.md).
-- This file is the queue: how far each table has been shipped, and what changed behind that point,
-- written in the same transactions as the changes themselves, so that a crash at any moment leaves
-- the queue and the data in step. Nothing here is part of the analyst's contract.
--
-- Readings are the bulk and are not logged one by one: each site has a position (every reading
-- at or before it has been shipped), readings later than the site's latest stored one are shipped
-- by moving that position, and the program logs the few that change behind it (a late reading, a
-- flag added afterwards, a recomputation) as time ranges in warehouse_changes. Every other shipped
-- table is small and logs each changed row by trigger (made only while the store ships).

-- One row once the store has been opened with a `warehouse:` configured. While `tracking` is 1 the
-- triggers exist and the program's range log records changes. Opened without a warehouse, the
-- store stops tracking and forgets its positions and the queue (a warehouse configured again
-- later is then sent the whole record), but keeps its store_id, so that it is still the store
-- that feeds its plant.
CREATE TABLE warehouse_state (
  one INTEGER PRIMARY KEY CHECK (one = 1),
  tracking INTEGER NOT NULL DEFAULT 1,  -- 1: changes are logged; 0: nothing ships
  store_id TEXT NOT NULL,  -- random; names this store in the warehouse, so that two stores
                           -- configured with the same plant name are refused, not mixed
  warehouse_id TEXT,       -- the warehouse the positions belong to; NULL before the first
                           -- connection. Another one (a new, empty warehouse) starts over.
  plant TEXT,              -- the plant name the positions belong to; another one starts over
  rows_backfilled INTEGER NOT NULL DEFAULT 0,  -- 1 once the small tables were sent whole
  last_shipped_ms INTEGER  -- when the warehouse last committed a shipment (ms since epoch, UTC)
);

-- Per site: every reading with time_ms <= shipped_to_ms is in the warehouse (as stored then; later
-- changes are in warehouse_changes). No row: nothing shipped yet.
CREATE TABLE warehouse_positions (
  site_key INTEGER PRIMARY KEY,  -- sites.site_key
  shipped_to_ms INTEGER NOT NULL
);

-- Changes still to ship, in the order they were made. AUTOINCREMENT: an id is never used twice,
-- even after the rows before it were shipped and deleted, so a row's id tells its place for good.
--   item 'readings': the readings of site_key with from_ms <= time_ms <= to_ms, as now stored
--   item 'daily'   : the daily figures of (site_key, day)
--   item 'alarm'   : alarm_events row number_key
--   item 'reject'  : rejected_lines row number_key
--   item 'version' : config_versions row number_key
--   item 'site'    : the site_settings of site_key
-- Each item other than 'readings' is logged once (a new change of the same row deletes the entry
-- and logs it anew, at the end): the shipper sends the row as it is when it is shipped, or deletes
-- it in the warehouse when it is gone.
CREATE TABLE warehouse_changes (
  change_id INTEGER PRIMARY KEY AUTOINCREMENT,
  item TEXT NOT NULL,
  site_key INTEGER NOT NULL DEFAULT 0,
  day TEXT NOT NULL DEFAULT '',
  number_key INTEGER NOT NULL DEFAULT 0,
  from_ms INTEGER,
  to_ms INTEGER
);
-- How a trigger finds the entry a new change replaces. The triggers that log the small tables'
-- changes (INSERT, UPDATE, DELETE on daily_figures, alarm_events, rejected_lines, config_versions
-- and site_settings) are made by the program while the store ships, and dropped when it stops
-- (lib/src/store/shipping_queue.cpp): a store that ships nowhere pays nothing for them.
CREATE INDEX warehouse_changes_row ON warehouse_changes (item, site_key, day, number_key);
