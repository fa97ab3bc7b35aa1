-- stagewell warehouse schema, migration 1: every plant's record in one PostgreSQL database.
--
-- Applied by stagewell itself (`stagewell warehouse ship`, or the service), in order, each file in
-- one transaction, in the configured schema (search_path is set to it; names here are
-- unqualified). A released file is never edited: a change is a new file. schema_migrations
-- records what was applied.
--
-- Each plant (one stagewell service with its own SQLite store) ships its rows here; its rows carry
-- its `plant` name, and site ids are unique per plant. The views have the SQLite store's view
-- columns, in the same order, after `plant`: a query written against one plant's file works across
-- all plants. Units are each plant's configuration's (site_details says which). Times are bigint
-- milliseconds since the Unix epoch, UTC (*_ms), shown as RFC 3339 UTC text in the views.

-- Which warehouse this is: a plant's store remembers it, so that pointed at another (an empty one
-- set up anew) it sends its whole record again.
CREATE TABLE warehouse (
  one integer PRIMARY KEY CHECK (one = 1),
  warehouse_id text NOT NULL,
  created timestamptz NOT NULL DEFAULT now()
);
INSERT INTO warehouse (one, warehouse_id) VALUES (1, md5(random()::text || clock_timestamp()::text));

-- The services that ship here, one row per plant name. store_id names the store that ships as
-- this plant: a second store configured with the same plant name is refused, not mixed in.
CREATE TABLE plant_stores (
  plant text PRIMARY KEY,
  store_id text NOT NULL,
  first_shipped_ms bigint NOT NULL,
  last_shipped_ms bigint NOT NULL
);

-- RFC 3339 UTC text of a time in ms since the epoch, exactly as the SQLite store's views write it:
-- '2026-03-01T06:15:00Z', with '.mmm' only when there are milliseconds. NULL for NULL.
CREATE FUNCTION rfc3339_ms(ms bigint) RETURNS text
LANGUAGE sql IMMUTABLE STRICT PARALLEL SAFE AS $$
  SELECT to_char(to_timestamp(div(ms - ((ms % 1000 + 1000) % 1000), 1000)::double precision)
                   AT TIME ZONE 'UTC', 'YYYY-MM-DD"T"HH24:MI:SS')
         || CASE WHEN ms % 1000 = 0 THEN ''
                 ELSE '.' || lpad(((ms % 1000 + 1000) % 1000)::text, 3, '0') END
         || 'Z'
$$;

-- Readings with the values the plant computed (as its `discharge` view shows them).
CREATE TABLE readings (
  plant text NOT NULL,
  site text NOT NULL,
  time_ms bigint NOT NULL,
  stage double precision NOT NULL,   -- raw stage, the site's stage units
  depth double precision,            -- m or ft
  discharge double precision,        -- m^3/s or ft^3/s; NULL when out of range
  flags text NOT NULL,               -- comma-separated flag names, '' when clean
  version text NOT NULL,             -- the configuration version's hash
  discharge_low double precision,
  discharge_high double precision,
  discharge_jones double precision,
  PRIMARY KEY (plant, site, time_ms)
);

CREATE TABLE daily_figures (
  plant text NOT NULL,
  site text NOT NULL,
  day text NOT NULL,                 -- 'YYYY-MM-DD', the plant's local day
  volume double precision,
  mean_discharge double precision,
  min_discharge double precision,
  min_time_ms bigint,
  max_discharge double precision,
  max_time_ms bigint,
  coverage double precision NOT NULL,
  readings bigint NOT NULL,
  flagged bigint NOT NULL,
  volume_low double precision,
  volume_high double precision,
  PRIMARY KEY (plant, site, day)
);

CREATE TABLE alarm_events (
  plant text NOT NULL,
  alarm_id bigint NOT NULL,          -- the plant's own numbering
  site text NOT NULL,
  kind text NOT NULL,
  raised_ms bigint NOT NULL,
  cleared_ms bigint,
  value double precision NOT NULL,
  threshold double precision NOT NULL,
  clear_value double precision,
  PRIMARY KEY (plant, alarm_id)
);

CREATE TABLE rejected_lines (
  plant text NOT NULL,
  reject_id bigint NOT NULL,         -- the plant's own numbering
  source text NOT NULL,
  position text NOT NULL,
  raw text NOT NULL,                 -- bytes that are not UTF-8 (and NUL) become U+FFFD here
  raw_bytes bigint NOT NULL,
  reason text NOT NULL,
  received_ms bigint NOT NULL,
  PRIMARY KEY (plant, reject_id)
);

CREATE TABLE config_versions (
  plant text NOT NULL,
  config_id bigint NOT NULL,         -- the plant's own numbering
  site text NOT NULL,
  config_json text NOT NULL,
  hash text NOT NULL,
  created_ms bigint NOT NULL,
  PRIMARY KEY (plant, config_id)
);

CREATE TABLE site_settings (
  plant text NOT NULL,
  site text NOT NULL,
  name text NOT NULL,
  time_zone text NOT NULL,
  stage_unit text NOT NULL,
  length_unit text NOT NULL,
  discharge_unit text NOT NULL,
  volume_unit text NOT NULL,
  latitude double precision,
  longitude double precision,
  datum text,
  PRIMARY KEY (plant, site)
);

-- The views (public contract: column names never change).
CREATE VIEW discharge AS
SELECT plant, site, rfc3339_ms(time_ms) AS time, time_ms::double precision / 1000 AS unix_time,
       stage, depth, discharge, flags, version, time_ms, discharge_low, discharge_high,
       discharge_jones
FROM readings;

CREATE VIEW daily AS
SELECT plant, site, day, volume, mean_discharge, min_discharge, rfc3339_ms(min_time_ms) AS min_time,
       max_discharge, rfc3339_ms(max_time_ms) AS max_time, coverage, readings, flagged,
       volume_low, volume_high
FROM daily_figures;

CREATE VIEW alarms AS
SELECT plant, site, kind, rfc3339_ms(raised_ms) AS raised, rfc3339_ms(cleared_ms) AS cleared,
       value, threshold, raised_ms AS time_ms
FROM alarm_events;

CREATE VIEW rejects AS
SELECT plant, source, position, raw, reason, rfc3339_ms(received_ms) AS received,
       CASE WHEN strpos(reason, ':') > 0 THEN substr(reason, 1, strpos(reason, ':') - 1) END
         AS kind,
       received_ms AS time_ms
FROM rejected_lines;

CREATE VIEW site_details AS
SELECT plant, site, name, time_zone, stage_unit, length_unit, discharge_unit, volume_unit,
       latitude, longitude, datum
FROM site_settings;

CREATE VIEW versions AS
SELECT plant, site, hash AS version, config_json AS config, rfc3339_ms(created_ms) AS created,
       created_ms AS time_ms
FROM config_versions;

CREATE VIEW plants AS
SELECT plant, rfc3339_ms(first_shipped_ms) AS first_shipped,
       rfc3339_ms(last_shipped_ms) AS last_shipped
FROM plant_stores;
