-- stagewell schema, migration 8: a database that states its own units, and time ranges that
-- use the key.
--
-- site_settings: what the configuration says about each site that an analyst needs beside the
-- numbers (its name, time zone, units as UCUM codes, location, datum). Rewritten from the
-- configuration each time the service or a command opens the database for writing; the view
-- site_details shows one row per configured site. UCUM: The Unified Code for Units of Measure
-- (case-sensitive codes): m, cm, mm, [ft_i], [in_i]; m3/s, [ft_i]3/s; m3, [ft_i]3.
CREATE TABLE site_settings (
  site_key INTEGER PRIMARY KEY REFERENCES sites(site_key),
  name TEXT NOT NULL,
  time_zone TEXT NOT NULL,       -- of the daily figures: an IANA name or a fixed offset
  stage_unit TEXT NOT NULL,      -- UCUM, the unit the site's stage readings are written in
  length_unit TEXT NOT NULL,     -- UCUM, depth and section lengths (m or [ft_i])
  discharge_unit TEXT NOT NULL,  -- UCUM, m3/s or [ft_i]3/s
  volume_unit TEXT NOT NULL,     -- UCUM, m3 or [ft_i]3
  latitude REAL,                 -- decimal degrees, north positive; NULL when not configured
  longitude REAL,                -- decimal degrees, east positive
  datum TEXT                     -- what the stage's zero is levelled to, free text
);

-- One row per configured site (public contract: column names never change).
CREATE VIEW site_details AS
SELECT
  s.id AS site,
  d.name AS name,
  d.time_zone AS time_zone,
  d.stage_unit AS stage_unit,
  d.length_unit AS length_unit,
  d.discharge_unit AS discharge_unit,
  d.volume_unit AS volume_unit,
  d.latitude AS latitude,
  d.longitude AS longitude,
  d.datum AS datum
FROM site_settings AS d
JOIN sites AS s ON s.site_key = d.site_key;

-- Every view with a time gains time_ms at its end: the integer milliseconds since the epoch
-- (UTC) the time is stored as, so that `WHERE site = ? AND time_ms BETWEEN ? AND ?` on discharge
-- searches the readings' primary key (site_key, time_ms) instead of reading the site's whole
-- history (the text `time` and the REAL `unix_time` are computed, so a filter on them cannot use
-- it). rejects also gains kind: the reason's category (bad_time, bad_stage, conflict, ...), the
-- part of reason before its first ':'.
DROP VIEW discharge;
DROP VIEW rejects;
DROP VIEW alarms;
DROP VIEW changes;
DROP VIEW recomputations;

-- discharge: as in migration 6, then time_ms (the reading's time).
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
  r.time_ms AS time_ms
FROM readings AS r
JOIN sites AS s ON s.site_key = r.site_key
JOIN config_versions AS v ON v.config_id = r.config_id
LEFT JOIN version_depth_terms AS d ON d.config_id = r.config_id;

-- rejects: as in migration 1, then kind and time_ms (when the line was read).
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
    || 'Z' AS received,
  CASE WHEN instr(reason, ':') > 0 THEN substr(reason, 1, instr(reason, ':') - 1) END AS kind,
  received_ms AS time_ms
FROM rejected_lines;

-- alarms: as in migration 3, then time_ms (when it was raised).
CREATE VIEW alarms AS
SELECT
  s.id AS site,
  a.kind AS kind,
  strftime('%Y-%m-%dT%H:%M:%S',
           (a.raised_ms - (a.raised_ms % 1000 + 1000) % 1000) / 1000, 'unixepoch')
    || CASE WHEN a.raised_ms % 1000 = 0 THEN ''
            ELSE printf('.%03d', (a.raised_ms % 1000 + 1000) % 1000) END
    || 'Z' AS raised,
  CASE WHEN a.cleared_ms IS NULL THEN NULL ELSE
    strftime('%Y-%m-%dT%H:%M:%S',
             (a.cleared_ms - (a.cleared_ms % 1000 + 1000) % 1000) / 1000, 'unixepoch')
      || CASE WHEN a.cleared_ms % 1000 = 0 THEN ''
              ELSE printf('.%03d', (a.cleared_ms % 1000 + 1000) % 1000) END
      || 'Z' END AS cleared,
  a.value AS value,
  a.threshold AS threshold,
  a.raised_ms AS time_ms
FROM alarm_events AS a
JOIN sites AS s ON s.site_key = a.site_key;

-- recomputations: as in migration 7, then time_ms (when it started).
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
            || 'Z' END AS finished,
  c.at_ms AS time_ms
FROM recomputation_runs AS c
JOIN sites AS s ON s.site_key = c.site_key;

-- The old name of recomputations, kept for queries written before migration 5.
CREATE VIEW changes AS SELECT * FROM recomputations;
