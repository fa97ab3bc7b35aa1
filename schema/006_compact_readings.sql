-- stagewell schema, migration 6: readings stored in fewer bytes and inserted with less work.
--
-- A reading's depth is a function of its stage, its time and its configuration version (the
-- version fixes the stage units, offset, zero-flow stage and any stage correction), so it is no
-- longer stored with each reading: the version's terms are stored once, in `version_depth_terms`,
-- and `discharge` computes depth from them with the same arithmetic, in the same order, as the
-- program (bit for bit the value it used to store). The readings table loses its REFERENCES
-- clauses as well: its site and version keys only ever come from the store itself, and checking
-- them cost a look-up in two other tables for every reading inserted.
--
-- The rows of `version_depth_terms` for versions recorded before this migration are written by
-- the program in the same transaction (from each version's JSON text), right after this script.

-- The terms that turn a stage into a depth, one row per configuration version:
--   depth = ((stage + correction) + stage_offset - zero_flow) * stage_unit_m / length_unit_m
--   correction = correction_offset + correction_drift * (time_ms - correction_from_ms)
--                                                     / (correction_to_ms - correction_from_ms)
--                for a version with a stage correction (its readings lie inside it), else 0
CREATE TABLE version_depth_terms (
  config_id INTEGER PRIMARY KEY,      -- config_versions.config_id
  stage_offset REAL NOT NULL,         -- site's stage units
  zero_flow REAL NOT NULL,            -- site's stage units
  stage_unit_m REAL NOT NULL,         -- metres in one stage unit
  length_unit_m REAL NOT NULL,        -- metres in one unit of depth (m: 1, ft: 0.3048)
  correction_from_ms INTEGER,         -- the version's stage correction, NULL when it has none
  correction_to_ms INTEGER,
  correction_offset REAL,             -- site's stage units
  correction_drift REAL               -- site's stage units over the correction's period
);

DROP VIEW discharge;

CREATE TABLE readings_compact (
  site_key INTEGER NOT NULL,  -- sites.site_key
  time_ms INTEGER NOT NULL,   -- time of the reading (ms since epoch, UTC)
  stage REAL NOT NULL,        -- the raw reading in the site's stage units, exactly as received
  discharge REAL,             -- m^3/s or ft^3/s (the configuration's unit system); NULL when there
                              -- is none (flag out_of_range)
  flags INTEGER NOT NULL DEFAULT 0,  -- bitmask of stagewell::Flags (see flag_names); 0 = clean
  config_id INTEGER NOT NULL,        -- config_versions.config_id: the version that computed
                                     -- depth, discharge and flags
  PRIMARY KEY (site_key, time_ms)
) WITHOUT ROWID;

INSERT INTO readings_compact (site_key, time_ms, stage, discharge, flags, config_id)
SELECT site_key, time_ms, stage, discharge, flags, config_id FROM readings ORDER BY site_key, time_ms;
DROP TABLE readings;
ALTER TABLE readings_compact RENAME TO readings;

-- The analyst's view of the readings: the same columns, names and values as before.
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
  ((r.stage + CASE WHEN d.correction_from_ms IS NULL THEN 0.0
                   ELSE d.correction_offset + d.correction_drift
                        * (CAST(r.time_ms - d.correction_from_ms AS REAL)
                           / CAST(d.correction_to_ms - d.correction_from_ms AS REAL)) END)
    + d.stage_offset - d.zero_flow) * d.stage_unit_m / d.length_unit_m AS depth,
  r.discharge AS discharge,
  CASE WHEN r.flags = 0 THEN ''
       ELSE coalesce((SELECT group_concat(f.name, ',')
                        FROM (SELECT name FROM flag_names WHERE r.flags & bit != 0 ORDER BY bit)
                          AS f), '') END AS flags,
  v.hash AS version
FROM readings AS r
JOIN sites AS s ON s.site_key = r.site_key
JOIN config_versions AS v ON v.config_id = r.config_id
LEFT JOIN version_depth_terms AS d ON d.config_id = r.config_id;
