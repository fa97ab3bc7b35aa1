-- stagewell schema, migration 5: one name for recomputing stored readings.
--
-- The record of recomputations was read through a view called `changes`, a word the configuration
-- uses for something else (a site's `changes:` from a time on). The view is now `recomputations`,
-- the table behind it `recomputation_runs`; `changes` stays as another name for the view so that
-- queries written against it keep working.

DROP VIEW changes;
ALTER TABLE recomputations RENAME TO recomputation_runs;

-- The analyst's view of recomputations (public contract: column names never change).
--   at                    when the recomputation started, RFC 3339 UTC text as in `discharge`
--   site                  the site id
--   period_from, period_to  the first and last reading recomputed, RFC 3339 UTC text (both
--                         included)
--   config_before, config_after  the version hashes before and after (see recomputation_runs)
--   readings_changed      readings whose depth, discharge or flags changed
--   max_discharge_change  m^3/s or ft^3/s (the configuration's unit system)
--   max_daily_volume_change  m^3 or ft^3
CREATE VIEW recomputations AS
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
FROM recomputation_runs AS c
JOIN sites AS s ON s.site_key = c.site_key;

-- The old name of the view above, kept for queries written before this migration.
CREATE VIEW changes AS SELECT * FROM recomputations;
