-- stagewell schema, migration 3: alarm events and the `alarms` view.
--
-- An alarm is raised and later cleared by the program (lib/src/alarms/, README "Alarms") in the
-- same transaction as the readings that raised or cleared it (a stale alarm: at a clock tick).
-- Times are INTEGER milliseconds since the Unix epoch, UTC (*_ms), as in `readings`.

-- One row per alarm: open while cleared_ms is NULL. At most one open alarm per site and kind.
CREATE TABLE alarm_events (
  alarm_id INTEGER PRIMARY KEY,  -- the order alarms were raised in
  site_key INTEGER NOT NULL REFERENCES sites(site_key),
  kind TEXT NOT NULL CHECK (kind IN ('low_flow', 'high_flow', 'stale', 'rising')),
  raised_ms INTEGER NOT NULL,   -- the reading that raised it, or the clock (stale)
  cleared_ms INTEGER,           -- the reading that cleared it, or the clock (stale); NULL: open
  value REAL NOT NULL,          -- what raised it, in the unit of its kind (see the view)
  threshold REAL NOT NULL,      -- the configured level it was compared with, same unit
  clear_value REAL              -- what cleared it, same unit; NULL while open
);
CREATE UNIQUE INDEX alarm_events_one_open ON alarm_events (site_key, kind) WHERE cleared_ms IS NULL;

-- The alarms of every site (public contract: column names never change).
--   site       the site id
--   kind       low_flow | high_flow | stale | rising
--   raised     RFC 3339 UTC text, as the `discharge` view's time
--   cleared    the same, NULL while the alarm is open
--   value, threshold  what raised it and the configured level, in the unit of the kind:
--     low_flow, high_flow  discharge, m^3/s or ft^3/s (the configuration's unit system)
--     stale                seconds without a reading, by the clock
--     rising               rate of rise of stage, the site's stage units per hour
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
  a.threshold AS threshold
FROM alarm_events AS a
JOIN sites AS s ON s.site_key = a.site_key;
