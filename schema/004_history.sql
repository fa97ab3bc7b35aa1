-- stagewell schema, migration 4: a record of every recomputation of stored readings (README,
-- "History and corrections"), and the configuration version of each reading in `discharge`.
--
-- Readings are recomputed when a site's history (`changes:`) or stage corrections (`corrections:`)
-- say something else for a period than what computed them: each stored reading names its
-- version (readings.config_id), and each period of a site's timeline has one.

-- One row per recomputation of one site: written with the first batch of recomputed readings and
-- brought up to date in the transaction of each batch after it, so that it always agrees with the
-- committed readings. A recomputation that finds nothing to do writes no row.
CREATE TABLE recomputations (
  recomputation_id INTEGER PRIMARY KEY,  -- order of recomputations
  site_key INTEGER NOT NULL REFERENCES sites(site_key),
  at_ms INTEGER NOT NULL,           -- when it started (ms since epoch, UTC)
  period_from_ms INTEGER NOT NULL,  -- first reading recomputed (ms since epoch, UTC)
  period_to_ms INTEGER NOT NULL,    -- last reading recomputed (ms since epoch, UTC), included
  config_before TEXT NOT NULL,      -- config_versions.hash of the versions that had computed the
                                    -- readings, comma-separated, in time order of first use
  config_after TEXT NOT NULL,       -- config_versions.hash of the versions that computed them now
  readings_changed INTEGER NOT NULL,     -- readings whose depth, discharge or flags changed
  max_discharge_change REAL NOT NULL,    -- largest |new - old| discharge, m^3/s or ft^3/s
                                         -- (a reading gaining or losing its discharge counts the
                                         -- discharge it has or had)
  max_daily_volume_change REAL NOT NULL  -- largest |new - old| daily volume of the days refreshed,
                                         -- m^3 or ft^3 (a day gaining or losing its volume counts
                                         -- the volume it has or had)
);

-- The analyst's view of the readings, as in 001 with one more column at the end:
--   version  config_versions.hash (16 hex digits) of the configuration version, stage correction
--            included, that computed depth, discharge and flags. The version's JSON text:
--            SELECT config_json FROM config_versions WHERE hash = '...'.
DROP VIEW discharge;
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
                          AS f), '') END AS flags,
  v.hash AS version
FROM readings AS r
JOIN sites AS s ON s.site_key = r.site_key
JOIN config_versions AS v ON v.config_id = r.config_id;

-- The analyst's view of recomputations (public contract: column names never change).
--   at                    when the recomputation started, RFC 3339 UTC text as in `discharge`
--   site                  the site id
--   period_from, period_to  the first and last reading recomputed, RFC 3339 UTC text (both
--                         included)
--   config_before, config_after  the version hashes before and after (see recomputations)
--   readings_changed      readings whose depth, discharge or flags changed
--   max_discharge_change  m^3/s or ft^3/s (the configuration's unit system)
--   max_daily_volume_change  m^3 or ft^3
CREATE VIEW changes AS
SELECT
  strftime('%Y-%m-%dT%H:%M:%S', (c.at_ms - (c.at_ms % 1000 + 1000) % 1000) / 1000, 'unixepoch')
    || CASE WHEN c.at_ms % 1000 = 0 THEN ''
            ELSE printf('.%03d', (c.at_ms % 1000 + 1000) % 1000) END
    || 'Z' AS at,
  s.id AS site,
  strftime('%Y-%m-%dT%H:%M:%S',
           (c.period_from_ms - (c.period_from_ms % 1000 + 1000) % 1000) / 1000, 'unixepoch')
    || CASE WHEN c.period_from_ms % 1000 = 0 THEN ''
            ELSE printf('.%03d', (c.period_from_ms % 1000 + 1000) % 1000) END
    || 'Z' AS period_from,
  strftime('%Y-%m-%dT%H:%M:%S',
           (c.period_to_ms - (c.period_to_ms % 1000 + 1000) % 1000) / 1000, 'unixepoch')
    || CASE WHEN c.period_to_ms % 1000 = 0 THEN ''
            ELSE printf('.%03d', (c.period_to_ms % 1000 + 1000) % 1000) END
    || 'Z' AS period_to,
  c.config_before AS config_before,
  c.config_after AS config_after,
  c.readings_changed AS readings_changed,
  c.max_discharge_change AS max_discharge_change,
  c.max_daily_volume_change AS max_daily_volume_change
FROM recomputations AS c
JOIN sites AS s ON s.site_key = c.site_key;
