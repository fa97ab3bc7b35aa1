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
-- table is small and logs each changed row by trigger.

-- Present (one row) while the store is shipping to a warehouse: the triggers below and the
-- program's range log only record changes then. Written when the service or a command opens the
-- store with a `warehouse:` configured; deleted, with the queue, when it is opened without one (a
-- warehouse configured again later is then sent the whole record).
CREATE TABLE warehouse_state (
  one INTEGER PRIMARY KEY CHECK (one = 1),
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
-- and logs it anew, at the end; not INSERT OR REPLACE, which the statement that fires a trigger
-- overrides with its own conflict handling): the shipper sends the row as it is when it is shipped, or deletes it in
-- the warehouse when it is gone.
CREATE TABLE warehouse_changes (
  change_id INTEGER PRIMARY KEY AUTOINCREMENT,
  item TEXT NOT NULL,
  site_key INTEGER NOT NULL DEFAULT 0,
  day TEXT NOT NULL DEFAULT '',
  number_key INTEGER NOT NULL DEFAULT 0,
  from_ms INTEGER,
  to_ms INTEGER
);
-- How a trigger finds the entry a new change replaces.
CREATE INDEX warehouse_changes_row ON warehouse_changes (item, site_key, day, number_key);

CREATE TRIGGER warehouse_daily_insert AFTER INSERT ON daily_figures
WHEN EXISTS (SELECT 1 FROM warehouse_state)
BEGIN
  DELETE FROM warehouse_changes WHERE item = 'daily' AND site_key = NEW.site_key AND day = NEW.day;
  INSERT INTO warehouse_changes (item, site_key, day) VALUES ('daily', NEW.site_key, NEW.day);
END;
CREATE TRIGGER warehouse_daily_update AFTER UPDATE ON daily_figures
WHEN EXISTS (SELECT 1 FROM warehouse_state)
BEGIN
  DELETE FROM warehouse_changes WHERE item = 'daily' AND site_key = NEW.site_key AND day = NEW.day;
  INSERT INTO warehouse_changes (item, site_key, day) VALUES ('daily', NEW.site_key, NEW.day);
END;
CREATE TRIGGER warehouse_daily_delete AFTER DELETE ON daily_figures
WHEN EXISTS (SELECT 1 FROM warehouse_state)
BEGIN
  DELETE FROM warehouse_changes WHERE item = 'daily' AND site_key = OLD.site_key AND day = OLD.day;
  INSERT INTO warehouse_changes (item, site_key, day) VALUES ('daily', OLD.site_key, OLD.day);
END;

CREATE TRIGGER warehouse_alarm_insert AFTER INSERT ON alarm_events
WHEN EXISTS (SELECT 1 FROM warehouse_state)
BEGIN
  DELETE FROM warehouse_changes WHERE item = 'alarm' AND number_key = NEW.alarm_id;
  INSERT INTO warehouse_changes (item, number_key) VALUES ('alarm', NEW.alarm_id);
END;
CREATE TRIGGER warehouse_alarm_update AFTER UPDATE ON alarm_events
WHEN EXISTS (SELECT 1 FROM warehouse_state)
BEGIN
  DELETE FROM warehouse_changes WHERE item = 'alarm' AND number_key = NEW.alarm_id;
  INSERT INTO warehouse_changes (item, number_key) VALUES ('alarm', NEW.alarm_id);
END;
CREATE TRIGGER warehouse_alarm_delete AFTER DELETE ON alarm_events
WHEN EXISTS (SELECT 1 FROM warehouse_state)
BEGIN
  DELETE FROM warehouse_changes WHERE item = 'alarm' AND number_key = OLD.alarm_id;
  INSERT INTO warehouse_changes (item, number_key) VALUES ('alarm', OLD.alarm_id);
END;

CREATE TRIGGER warehouse_reject_insert AFTER INSERT ON rejected_lines
WHEN EXISTS (SELECT 1 FROM warehouse_state)
BEGIN
  DELETE FROM warehouse_changes WHERE item = 'reject' AND number_key = NEW.reject_id;
  INSERT INTO warehouse_changes (item, number_key) VALUES ('reject', NEW.reject_id);
END;
CREATE TRIGGER warehouse_reject_delete AFTER DELETE ON rejected_lines
WHEN EXISTS (SELECT 1 FROM warehouse_state)
BEGIN
  DELETE FROM warehouse_changes WHERE item = 'reject' AND number_key = OLD.reject_id;
  INSERT INTO warehouse_changes (item, number_key) VALUES ('reject', OLD.reject_id);
END;

CREATE TRIGGER warehouse_version_insert AFTER INSERT ON config_versions
WHEN EXISTS (SELECT 1 FROM warehouse_state)
BEGIN
  DELETE FROM warehouse_changes WHERE item = 'version' AND number_key = NEW.config_id;
  INSERT INTO warehouse_changes (item, number_key) VALUES ('version', NEW.config_id);
END;

CREATE TRIGGER warehouse_site_insert AFTER INSERT ON site_settings
WHEN EXISTS (SELECT 1 FROM warehouse_state)
BEGIN
  DELETE FROM warehouse_changes WHERE item = 'site' AND site_key = NEW.site_key;
  INSERT INTO warehouse_changes (item, site_key) VALUES ('site', NEW.site_key);
END;
CREATE TRIGGER warehouse_site_update AFTER UPDATE ON site_settings
WHEN EXISTS (SELECT 1 FROM warehouse_state)
BEGIN
  DELETE FROM warehouse_changes WHERE item = 'site' AND site_key = NEW.site_key;
  INSERT INTO warehouse_changes (item, site_key) VALUES ('site', NEW.site_key);
END;
CREATE TRIGGER warehouse_site_delete AFTER DELETE ON site_settings
WHEN EXISTS (SELECT 1 FROM warehouse_state)
BEGIN
  DELETE FROM warehouse_changes WHERE item = 'site' AND site_key = OLD.site_key;
  INSERT INTO warehouse_changes (item, site_key) VALUES ('site', OLD.site_key);
END;
