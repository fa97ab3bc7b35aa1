-- stagewell schema, migration 7: a recomputation says whether it finished.
--
-- A recomputation commits its work in steps; killed between two steps, it left a row describing
-- only the part it did, and the next run of the same site added a row of its own for the rest.
-- A run now goes on with its site's unfinished row (same start, period and totals widened), and
-- marks the row finished in the transaction of its last step. Rows written before this migration
-- are taken as finished: whether they were cannot be known.

ALTER TABLE recomputation_runs ADD COLUMN finished_ms INTEGER;  -- NULL: not finished
UPDATE recomputation_runs SET finished_ms = at_ms;
CREATE INDEX recomputation_runs_unfinished ON recomputation_runs (site_key)
  WHERE finished_ms IS NULL;

-- The analyst's view, as in migration 5 with one column more at the end (public contract: column
-- names never change):
--   finished  when the recomputation's last step committed, RFC 3339 UTC text; NULL while one
--             runs, or after one was stopped part-way (the next run of the site goes on with it).
--             Before schema version 7 this was not recorded: such rows show their start.
DROP VIEW changes;
DROP VIEW recomputations;
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
  c.max_daily_volume_change AS max_daily_volume_change,
  CASE WHEN c.finished_ms IS NULL THEN NULL
       ELSE strftime('%Y-%m-%dT%H:%M:%S',
                     (c.finished_ms - (c.finished_ms % 1000 + 1000) % 1000) / 1000, 'unixepoch')
            || CASE WHEN c.finished_ms % 1000 = 0 THEN ''
                    ELSE printf('.%03d', (c.finished_ms % 1000 + 1000) % 1000) END
            || 'Z' END AS finished
FROM recomputation_runs AS c
JOIN sites AS s ON s.site_key = c.site_key;

-- The old name of the view above, kept for queries written before migration 5.
CREATE VIEW changes AS SELECT * FROM recomputations;
