-- stagewell schema, migration 2: daily figures per site and local day, and the `daily` view.
--
-- The figures are computed by the program (lib/src/daily/, README "Daily figures") and kept
-- current in the same transaction as the readings they come from. Rows exist for the days that
-- have a reading or some integrated time; a day with neither has no row.
--
-- Volumes are in m^3 or ft^3 and discharges in m^3/s or ft^3/s: the configuration's unit system,
-- as in `readings`. Times are INTEGER milliseconds since the Unix epoch, UTC (*_ms).

-- One row per site and local calendar day (the configuration's `timezone`).
CREATE TABLE daily_figures (
  site_key INTEGER NOT NULL REFERENCES sites(site_key),
  day TEXT NOT NULL,             -- the local day, 'YYYY-MM-DD'
  start_ms INTEGER NOT NULL,     -- its first instant (ms since epoch, UTC)
  end_ms INTEGER NOT NULL,       -- the first instant of the next day: 23, 24 or 25 hours later
  volume REAL,                   -- m^3 or ft^3 over the covered time; NULL when none is covered
  mean_discharge REAL,           -- volume / covered time, m^3/s or ft^3/s; NULL when none covered
  min_discharge REAL,            -- lowest used reading of the day; NULL when it has none
  min_time_ms INTEGER,           -- its time (the earliest, when several are equal)
  max_discharge REAL,            -- highest used reading of the day; NULL when it has none
  max_time_ms INTEGER,           -- its time (the earliest, when several are equal)
  covered_ms INTEGER NOT NULL,   -- time of the day that was integrated (ms)
  coverage REAL NOT NULL,        -- covered_ms / (end_ms - start_ms), 0 to 1
  readings INTEGER NOT NULL,     -- readings stored with a time in the day, flagged or not
  flagged INTEGER NOT NULL,      -- of those, readings with at least one flag
  PRIMARY KEY (site_key, day)
) WITHOUT ROWID;

-- How many of a day's readings carry each flag (a reading with two flags counts under both).
-- Only flags that occur have a row.
CREATE TABLE daily_flag_counts (
  site_key INTEGER NOT NULL,
  day TEXT NOT NULL,
  bit INTEGER NOT NULL REFERENCES flag_names(bit),
  readings INTEGER NOT NULL CHECK (readings > 0),
  PRIMARY KEY (site_key, day, bit),
  FOREIGN KEY (site_key, day) REFERENCES daily_figures(site_key, day) ON DELETE CASCADE
) WITHOUT ROWID;

-- The settings a site's stored figures were computed with (time zone, unit system, max_gap, flag
-- treatment, version of the method), as JSON text. When the configuration's differ, the program
-- recomputes the site's figures from its readings.
CREATE TABLE daily_settings (
  site_key INTEGER PRIMARY KEY REFERENCES sites(site_key),
  settings TEXT NOT NULL
);

-- The analyst's view of the daily figures (public contract: column names never change).
--   site            the site id
--   day             'YYYY-MM-DD', the local calendar day of the configuration's timezone
--   volume          m^3 or ft^3 (the configuration's units) over the covered part of the day
--   mean_discharge  volume / covered time, m^3/s or ft^3/s
--   min_discharge, max_discharge  the lowest and highest used reading of the day
--   min_time, max_time            their times, RFC 3339 UTC text as in the `discharge` view
--   coverage        the share of the day with data, 0 to 1
--   readings        readings stored in the day; flagged: how many of them carry a flag
CREATE VIEW daily AS
SELECT
  s.id AS site,
  f.day AS day,
  f.volume AS volume,
  f.mean_discharge AS mean_discharge,
  f.min_discharge AS min_discharge,
  CASE WHEN f.min_time_ms IS NULL THEN NULL ELSE
    strftime('%Y-%m-%dT%H:%M:%S',
             (f.min_time_ms - (f.min_time_ms % 1000 + 1000) % 1000) / 1000, 'unixepoch')
      || CASE WHEN f.min_time_ms % 1000 = 0 THEN ''
              ELSE printf('.%03d', (f.min_time_ms % 1000 + 1000) % 1000) END
      || 'Z' END AS min_time,
  f.max_discharge AS max_discharge,
  CASE WHEN f.max_time_ms IS NULL THEN NULL ELSE
    strftime('%Y-%m-%dT%H:%M:%S',
             (f.max_time_ms - (f.max_time_ms % 1000 + 1000) % 1000) / 1000, 'unixepoch')
      || CASE WHEN f.max_time_ms % 1000 = 0 THEN ''
              ELSE printf('.%03d', (f.max_time_ms % 1000 + 1000) % 1000) END
      || 'Z' END AS max_time,
  f.coverage AS coverage,
  f.readings AS readings,
  f.flagged AS flagged
FROM daily_figures AS f
JOIN sites AS s ON s.site_key = f.site_key;

-- Per-flag detail of the daily figures: one row per site, day and flag that occurs.
CREATE VIEW daily_flags AS
SELECT s.id AS site, c.day AS day, n.name AS flag, c.readings AS readings
FROM daily_flag_counts AS c
JOIN sites AS s ON s.site_key = c.site_key
JOIN flag_names AS n ON n.bit = c.bit;
