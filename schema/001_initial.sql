-- stagewell schema, migration 1: the initial tables and the analyst views.
--
-- Migration policy (see README, "The database"): files schema/NNN_name.sql are compiled into the
-- program and applied in order when the database is opened read-write, each in its own
-- transaction, and PRAGMA user_version records the last one applied. A file, once released, is
-- never edited: a change is a new file. No file may contain BEGIN/COMMIT (the runner supplies the
-- transaction).
--
-- Times are INTEGER milliseconds since the Unix epoch (1970-01-01T00:00:00Z), UTC, in columns
-- named *_ms. The views turn them into RFC 3339 text.
--
-- Not STRICT tables: analysts open this file with whatever sqlite3 they have, and STRICT needs
-- SQLite 3.37 or later to read at all.

-- Marks the file as a stagewell database ("STGW" in ASCII), so that the program refuses to add
-- its tables to some other application's database.
PRAGMA application_id = 1398032215;

-- A measuring site. Other tables refer to it by its small integer key.
CREATE TABLE sites (
  site_key INTEGER PRIMARY KEY,  -- key used by every other table (an alias of the rowid)
  id TEXT NOT NULL UNIQUE        -- the site id of the configuration, e.g. 'raceway-a'
);

-- The configuration of a site as it was when readings were computed. Every stored reading names
-- the version that produced its depth, discharge and flags, so results stay explainable after
-- the configuration file changes.
CREATE TABLE config_versions (
  config_id INTEGER PRIMARY KEY,                        -- key referred to by readings
  site_key INTEGER NOT NULL REFERENCES sites(site_key),
  config_json TEXT NOT NULL,  -- the site's configuration as JSON text, exactly as the program made it
  hash TEXT NOT NULL,         -- FNV-1a 64-bit of config_json's UTF-8 bytes, 16 lowercase hex digits:
                              -- a short name for a version, not a security measure
  created_ms INTEGER NOT NULL,  -- when this version was first recorded (ms since epoch, UTC)
  UNIQUE (site_key, config_json)  -- the same text for the same site is the same version
);

-- One reading per site and time. WITHOUT ROWID: the table is stored in (site, time) order, so a
-- site's readings over a period are one range of the primary key.
CREATE TABLE readings (
  site_key INTEGER NOT NULL REFERENCES sites(site_key),
  time_ms INTEGER NOT NULL,  -- time of the reading (ms since epoch, UTC)
  stage REAL NOT NULL,       -- the raw reading in the site's stage units, exactly as received;
                             -- never corrected (offsets are applied to depth, not here)
  depth REAL NOT NULL,       -- flow depth in the configuration's length unit (m or ft):
                             -- stage + offset - zero_flow, converted
  discharge REAL,            -- m^3/s or ft^3/s (the configuration's unit system);
                             -- NULL when there is none (flag out_of_range)
  flags INTEGER NOT NULL DEFAULT 0,  -- bitmask of stagewell::Flags (see flag_names); 0 = clean
  config_id INTEGER NOT NULL REFERENCES config_versions(config_id),  -- the version that computed
                                                                     -- depth, discharge and flags
  PRIMARY KEY (site_key, time_ms)
) WITHOUT ROWID;

-- Input that could not be used: malformed lines, unknown sites, a second, different stage for a
-- time already stored. Kept for a person to look at; never fatal.
CREATE TABLE rejected_lines (
  reject_id INTEGER PRIMARY KEY,  -- arrival order
  source TEXT NOT NULL,    -- the source the line came from (a file path or a socket peer)
  position TEXT NOT NULL,  -- where in the source, e.g. 'gauge.csv:123' or 'line 17'
  raw TEXT NOT NULL,       -- the line as received, cut to its first 4096 bytes (at a UTF-8
                           -- character boundary) so that one huge line cannot bloat the file
  raw_bytes INTEGER NOT NULL,  -- length of the whole line in bytes; > length(CAST(raw AS BLOB))
                               -- when raw was cut
  reason TEXT NOT NULL,    -- why it was rejected, a sentence for a person
  received_ms INTEGER NOT NULL  -- when the line was read (ms since epoch, UTC)
);

-- How far each source has been read. It is written in the same transaction as the readings that
-- came from it, so that after a crash reading resumes exactly where the stored data ends.
CREATE TABLE ingest_progress (
  source TEXT PRIMARY KEY,      -- the source key, e.g. the file's path
  file_identity TEXT NOT NULL,  -- which file the offset belongs to, e.g. 'device:inode', so that a
                                -- rotated or replaced file is read from its start
  byte_offset INTEGER NOT NULL CHECK (byte_offset >= 0),  -- bytes of the file consumed
  updated_ms INTEGER NOT NULL   -- when this row was last written (ms since epoch, UTC)
) WITHOUT ROWID;

-- The names of the quality flags, in the order and with the bits of lib/include/stagewell/flags.hpp.
-- A test checks that this table matches stagewell::all_flags(); a new flag needs a new migration.
CREATE TABLE flag_names (
  bit INTEGER PRIMARY KEY,  -- the flag's value in readings.flags (a power of two)
  name TEXT NOT NULL UNIQUE -- its name in the public contract, never renamed
);
INSERT INTO flag_names (bit, name) VALUES
  (1, 'below_zero_flow'),
  (2, 'above_section'),
  (4, 'surcharged'),
  (8, 'supercritical'),
  (16, 'out_of_range'),
  (32, 'spike'),
  (64, 'unsteady'),
  (128, 'flatline'),
  (256, 'gap'),
  (512, 'late'),
  (1024, 'future');

-- The analyst's view of the readings (public contract: column names never change).
--   site       the site id (text)
--   time       RFC 3339 UTC text, '2026-03-01T06:15:00Z'; '.mmmZ' (three digits) only when the
--              time has milliseconds. Sort and filter by unix_time: the text does not sort
--              correctly within one second ('.250Z' < 'Z').
--   unix_time  REAL seconds since the Unix epoch (the nearest double to time_ms / 1000)
--   stage      raw stage, site's stage units; depth in m or ft; discharge in m^3/s or ft^3/s, NULL
--              when out of range
--   flags      comma-separated flag names in flag_names order, '' when clean
-- Plain SQL only (no functions registered by the program), so the stock sqlite3 shell can use it.
-- The seconds are floored, not truncated, so times before 1970 print correctly.
CREATE VIEW discharge AS
SELECT
  s.id AS site,
  strftime('%Y-%m-%dT%H:%M:%S',
           (r.time_ms - (r.time_ms % 1000 + 1000) % 1000) / 1000, 'unixepoch')
    || CASE WHEN r.time_ms % 1000 = 0 THEN ''
            ELSE printf('.%03d', (r.time_ms % 1000 + 1000) % 1000) END
    || 'Z' AS time,
  r.time_ms / 1000.0 AS unix_time,
  r.stage AS stage,
  r.depth AS depth,
  r.discharge AS discharge,
  CASE WHEN r.flags = 0 THEN ''
       ELSE coalesce((SELECT group_concat(f.name, ',')
                        FROM (SELECT name FROM flag_names WHERE r.flags & bit != 0 ORDER BY bit)
                          AS f), '') END AS flags
FROM readings AS r
JOIN sites AS s ON s.site_key = r.site_key;

-- The analyst's view of rejected input (public contract). received is RFC 3339 UTC text as in
-- the discharge view.
CREATE VIEW rejects AS
SELECT
  source,
  position,
  raw,
  reason,
  strftime('%Y-%m-%dT%H:%M:%S',
           (received_ms - (received_ms % 1000 + 1000) % 1000) / 1000, 'unixepoch')
    || CASE WHEN received_ms % 1000 = 0 THEN ''
            ELSE printf('.%03d', (received_ms % 1000 + 1000) % 1000) END
    || 'Z' AS received
FROM rejected_lines;
