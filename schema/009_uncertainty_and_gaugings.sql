-- stagewell schema, migration 9: how far each discharge can be trusted, and the field
-- measurements that check it.
--
-- readings gain two nullable columns, computed with the discharge (docs/uncertainty.md), each a
-- whole number of basis points (1 bp = 0.01 % of the discharge) so that it takes 1 to 3 bytes
-- instead of a REAL's 8 (a 0.01 % step is far finer than either figure is known to):
--   band_bp   the relative expanded uncertainty of the discharge (coverage factor 2, about 95 %):
--             the discharge lies within discharge * (1 +- band_bp / 10000). First-order
--             propagation (JCGM 100:2008) of the site's standard uncertainties of roughness, slope
--             and stage. NULL where the reading has no discharge or a discharge of 0.
--   jones_bp  the discharge corrected for a changing stage by the Jones formula, from this reading
--             and the one before it, as discharge * (1 + jones_bp / 10000); NULL where it cannot be
--             formed (first reading, after a gap, no free surface, a root of a negative number).
-- Readings stored before this migration keep NULL in both until they are computed again (a
-- change of configuration, or `stagewell recompute`).
ALTER TABLE readings ADD COLUMN band_bp INTEGER;
ALTER TABLE readings ADD COLUMN jones_bp INTEGER;

-- The daily volume integrated from the low and the high ends of each reading's band, m^3 or ft^3.
ALTER TABLE daily_figures ADD COLUMN volume_low REAL;
ALTER TABLE daily_figures ADD COLUMN volume_high REAL;

-- Field measurements of discharge ("gaugings"), one per site and time, imported by
-- `stagewell gaugings import`. `computed` and `roughness` are those of the configuration version in
-- force at the gauging's time and are refreshed whenever that version changes.
CREATE TABLE gauging_records (
  site_key INTEGER NOT NULL,         -- sites.site_key
  time_ms INTEGER NOT NULL,          -- ms since the epoch, UTC
  stage REAL NOT NULL,               -- site's stage units: as measured, or interpolated
  stage_interpolated INTEGER NOT NULL DEFAULT 0,  -- 1 when taken from the stored readings
  measured REAL NOT NULL,            -- m^3/s or ft^3/s (the configuration's unit system)
  uncertainty REAL NOT NULL,         -- percent of `measured`, the measurement's own
  method TEXT,                       -- free text: current meter, acoustic, volumetric...
  note TEXT,
  computed REAL,                     -- the discharge at `stage` by version config_id; NULL
                                     -- when the stage is outside the site's range
  roughness REAL,                    -- the main channel's Manning's n in that version
  config_id INTEGER,                 -- config_versions.config_id
  imported_ms INTEGER NOT NULL,      -- when it was (last) imported
  PRIMARY KEY (site_key, time_ms)
) WITHOUT ROWID;

-- The analyst's view of the gaugings, named after them (so the table is gauging_records).
-- Public contract: column names never change.
--   measured, computed        m^3/s or ft^3/s
--   difference_percent        100 (measured - computed) / computed
--   implied_roughness         the main channel's n that would make computed equal measured
--                             (every subsection's n scaled by the same factor)
CREATE VIEW gaugings AS
SELECT
  s.id AS site,
  strftime('%Y-%m-%dT%H:%M:%S',
           (g.time_ms - (g.time_ms % 1000 + 1000) % 1000) / 1000, 'unixepoch')
    || CASE WHEN g.time_ms % 1000 = 0 THEN ''
            ELSE printf('.%03d', (g.time_ms % 1000 + 1000) % 1000) END
    || 'Z' AS time,
  g.stage AS stage,
  g.measured AS measured,
  g.computed AS computed,
  CASE WHEN g.computed > 0 THEN 100.0 * (g.measured - g.computed) / g.computed END
    AS difference_percent,
  CASE WHEN g.measured > 0 AND g.computed > 0 THEN g.roughness * g.computed / g.measured END
    AS implied_roughness,
  g.method AS method,
  g.note AS note,
  v.hash AS version,
  g.time_ms AS time_ms
FROM gauging_records AS g
JOIN sites AS s ON s.site_key = g.site_key
LEFT JOIN config_versions AS v ON v.config_id = g.config_id;

-- discharge: as in migration 8, then the band's ends and the Jones discharge (m^3/s or ft^3/s).
-- The low end never goes below 0.
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
  v.hash AS version,
  r.time_ms AS time_ms,
  CASE WHEN r.band_bp IS NULL THEN r.discharge
       ELSE max(0.0, r.discharge * (1.0 - r.band_bp / 10000.0)) END AS discharge_low,
  CASE WHEN r.band_bp IS NULL THEN r.discharge
       ELSE r.discharge * (1.0 + r.band_bp / 10000.0) END AS discharge_high,
  CASE WHEN r.jones_bp IS NULL THEN NULL
       ELSE r.discharge * (1.0 + r.jones_bp / 10000.0) END AS discharge_jones
FROM readings AS r
JOIN sites AS s ON s.site_key = r.site_key
JOIN config_versions AS v ON v.config_id = r.config_id
LEFT JOIN version_depth_terms AS d ON d.config_id = r.config_id;

-- daily: as in migration 2, then the volume integrated from the band's low and high ends.
DROP VIEW daily;
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
  f.flagged AS flagged,
  f.volume_low AS volume_low,
  f.volume_high AS volume_high
FROM daily_figures AS f
JOIN sites AS s ON s.site_key = f.site_key;
