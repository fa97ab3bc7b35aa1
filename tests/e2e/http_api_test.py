#!/usr/bin/env python3
"""The HTTP API, page and metrics of stagewelld against the database read directly (Python's
sqlite3 on the same file), Manning's equation in closed form, Python's zoneinfo for the local day,
and the OpenMetrics 1.0 text format rules (openmetrics.io specification: `# TYPE`, `# UNIT`,
`# HELP` lines, samples `name{labels} value`, counters sampled as NAME_total, `# EOF` last).

A daemon with `http:` on a free loopback port ingests 30 hours of invented readings of two sites
(a third has none); then alarm events behind the `alarms` view (site, kind, raised,
cleared, value, threshold) are added to the database by hand and the daemon restarted, to check
the path that reads open alarms."""
import datetime
import json
import math
import os
import re
import signal
import sqlite3
import tempfile
import time
import zoneinfo

import daemon_support as ds
import http_support as hs

R = ds.Results()
ZONE = zoneinfo.ZoneInfo("America/Denver")  # the configuration's timezone (IANA tzdata)
MINUTES = 30 * 60


def series():
    now_ms = int(time.time() * 1000) - 2 * 60000
    channel = hs.minute_series(now_ms, MINUTES, lambda i: 0.30 + 0.20 * math.sin(i / 97.0))
    canal = hs.minute_series(now_ms, MINUTES, lambda i: 45.0 + 12.0 * math.cos(i / 131.0))
    return channel, canal


def db_rows(db, sql, params=()):
    return ds.query(db, sql, params)


def check_sites(port, db, channel_rows):
    before_day = datetime.datetime.now(ZONE).date().isoformat()
    status, headers, body = hs.get(port, "/api/sites")
    after_day = datetime.datetime.now(ZONE).date().isoformat()
    R.check("/api/sites 200", status == 200, status)
    R.check("/api/sites is JSON", headers.get("content-type", "").startswith("application/json"))
    data = json.loads(body)
    R.check("today is the local day in America/Denver (zoneinfo)",
            data["today"] in (before_day, after_day), f"{data['today']} vs {before_day}")
    R.check("the caution names Manning's equation", "Manning" in data["caution"])
    R.check("the alarms view is there (schema)", data["alarms_available"] is True)
    R.check("no alarm is open yet", all(not site["alarms"] for site in data["sites"]))
    by_id = {s["id"]: s for s in data["sites"]}
    R.check("every configured site, in order", [s["id"] for s in data["sites"]] ==
            ["channel", "canal", "silent"])
    R.check("units: stage of the canal in cm", by_id["canal"]["stage_unit"] == "cm")
    # UCUM codes (The Unified Code for Units of Measure), the API's one spelling of units.
    R.check("units: discharge m3/s, volume m3", by_id["channel"]["discharge_unit"] == "m3/s" and
            by_id["channel"]["volume_unit"] == "m3")
    for site in ("channel", "canal"):
        latest = by_id[site]["latest"]
        row = db_rows(db, "SELECT time, stage, depth, discharge, flags FROM discharge "
                          "WHERE site = ? ORDER BY unix_time DESC LIMIT 1", (site,))[0]
        R.check(f"{site}: latest time = database", latest["time"] == row[0], (latest, row))
        R.check(f"{site}: latest stage = database", latest["stage"] == row[1])
        R.check(f"{site}: latest depth = database", latest["depth"] == row[2])
        R.check(f"{site}: latest discharge = database", latest["discharge"] == row[3])
        R.check(f"{site}: latest flags = database",
                latest["flags"] == (row[4].split(",") if row[4] else []))
        R.check(f"{site}: age of the latest reading", 60 <= latest["age_s"] < 600,
                latest["age_s"])
        day = db_rows(db, "SELECT volume, readings FROM daily WHERE site = ? AND day = ?",
                      (site, data["today"]))
        want = day[0][0] if day else None
        R.check(f"{site}: today's volume = daily view", by_id[site]["today"]["volume"] == want,
                (by_id[site]["today"], want))
        R.check(f"{site}: today's readings = daily view",
                by_id[site]["today"]["readings"] == (day[0][1] if day else 0))
    # The latest channel reading against Manning's equation in closed form: rectangular,
    # 2 m wide, n 0.014, S 0.001, depth = stage (no offset, zero flow 0); 5e-4 is the rating
    # table's interpolation tolerance (docs/hydraulics.md, "Rating tables").
    stage = channel_rows[-1][1]
    want, _ = ds.manning(ds.rectangular(2.0, 1.5), 0.014, 0.001, stage)
    R.close("channel: latest discharge vs Manning closed form",
            by_id["channel"]["latest"]["discharge"], want, 5e-4)
    R.check("silent: no latest reading", by_id["silent"]["latest"] is None)
    R.check("silent: no volume today", by_id["silent"]["today"]["volume"] is None)


def check_readings(port, db):
    # An explicit range, written with an offset, both ends included.
    rows = db_rows(db, "SELECT unix_time FROM discharge WHERE site = 'canal' "
                       "ORDER BY unix_time DESC LIMIT 1")
    last_ms = round(rows[0][0] * 1000)
    to_ms = last_ms - 60 * 60000
    from_ms = to_ms - 3 * 3600 * 1000
    to_local = datetime.datetime.fromtimestamp(to_ms / 1000, datetime.timezone(
        datetime.timedelta(hours=-7))).isoformat()
    path = f"/api/sites/canal/readings?from={ds.iso(from_ms)}&to={to_local.replace('+', '%2B')}"
    status, data = hs.get_json(port, path)
    R.check("readings with a range: 200", status == 200, (status, data))
    want = db_rows(db, "SELECT time, stage, depth, discharge, flags FROM discharge WHERE "
                       "site = 'canal' AND unix_time BETWEEN ? AND ? ORDER BY unix_time",
                   (from_ms / 1000, to_ms / 1000))
    got = [(r["time"], r["stage"], r["depth"], r["discharge"], ",".join(r["flags"]))
           for r in data["readings"]]
    R.check("readings with a range = database (181 minutes, both ends)",
            got == want and len(want) == 181, (len(got), len(want)))
    R.check("readings: units", data["stage_unit"] == "cm" and data["discharge_unit"] == "m3/s")
    # The default: the 24 hours up to now.
    status, data = hs.get_json(port, "/api/sites/channel/readings")
    from_ms = round(datetime.datetime.fromisoformat(data["from"].replace("Z", "+00:00"))
                    .timestamp() * 1000)
    to_ms = round(datetime.datetime.fromisoformat(data["to"].replace("Z", "+00:00"))
                  .timestamp() * 1000)
    R.check("default range: 24 h", to_ms - from_ms == 24 * 3600 * 1000, (data["from"], data["to"]))
    R.check("default range ends now", abs(to_ms - time.time() * 1000) < 60000)
    count = ds.count(db, "SELECT count(*) FROM discharge WHERE site = 'channel' AND "
                         "unix_time BETWEEN ? AND ?", (from_ms / 1000, to_ms / 1000))
    R.check("default range: the database's count", len(data["readings"]) == count and count > 1000,
            (len(data["readings"]), count))


def check_daily(port, db):
    days = [r[0] for r in db_rows(db, "SELECT day FROM daily WHERE site = 'channel' ORDER BY day")]
    status, data = hs.get_json(port, f"/api/sites/channel/daily?from={days[0]}&to={days[-1]}")
    R.check("daily: 200", status == 200, (status, data))
    want = db_rows(db, "SELECT day, volume, mean_discharge, min_discharge, max_discharge, "
                       "coverage, readings, flagged FROM daily WHERE site = 'channel' ORDER BY day")
    got = [(d["day"], d["volume"], d["mean_discharge"], d["min_discharge"], d["max_discharge"],
            d["coverage"], d["readings"], d["flagged"]) for d in data["days"]]
    R.check("daily = the daily view", got == want and len(want) >= 2, (got, want))


SAMPLE = re.compile(r'^(?P<name>[a-zA-Z_:][a-zA-Z0-9_:]*)'
                    r'(\{(?P<labels>[a-zA-Z_][a-zA-Z0-9_]*="(\\.|[^"\\])*"'
                    r'(,[a-zA-Z_][a-zA-Z0-9_]*="(\\.|[^"\\])*")*)\})? (?P<value>\S+)$')


def parse_metrics(text, openmetrics=True):
    """{(name, labels text): value}, checking the text format's rules as it goes."""
    lines = text.split("\n")
    R.check("metrics end with a line feed", lines[-1] == "")
    lines = lines[:-1]
    if openmetrics:
        R.check("`# EOF` is the last line", lines[-1] == "# EOF", lines[-3:])
        lines = lines[:-1]
        R.check("`# EOF` only once", "# EOF" not in lines)
    types = {}
    samples = {}
    for line in lines:
        if line.startswith("#"):
            parts = line.split(" ", 3)
            ok = len(parts) >= 4 and parts[1] in ("TYPE", "HELP", "UNIT")
            if not R.check("a comment is TYPE, HELP or UNIT", ok, line):
                continue
            if parts[1] == "TYPE":
                R.check("one TYPE per family", parts[2] not in types, line)
                types[parts[2]] = parts[3]
            if parts[1] == "UNIT":
                R.check("a UNIT is the family name's suffix", parts[2].endswith("_" + parts[3]))
            continue
        match = SAMPLE.match(line)
        if not R.check("sample line `name{labels} value`", match is not None, line):
            continue
        name, labels, value = match["name"], match["labels"] or "", match["value"]
        try:
            number = float(value)
        except ValueError:
            R.check("sample value is a number", False, line)
            continue
        family = name
        for suffix in ("_total", "_info"):  # OpenMetrics: counter and info sample suffixes
            if openmetrics and name.endswith(suffix) and name[:-len(suffix)] in types:
                family = name[:-len(suffix)]
        R.check("sample after its family's TYPE", family in types, line)
        if types.get(family) == "counter":
            R.check("counter samples end in _total", name.endswith("_total"), line)
            R.check("counters are not negative", number >= 0, line)
        R.check("no sample twice", (name, labels) not in samples, line)
        samples[(name, labels)] = number
    return samples


def check_metrics(port, db, stored_since_start):
    status, headers, body = hs.get(port, "/metrics")
    R.check("/metrics 200", status == 200)
    R.check("OpenMetrics content type", headers.get("content-type") ==
            "application/openmetrics-text; version=1.0.0; charset=utf-8", headers)
    m = parse_metrics(body.decode())
    R.check("readings stored since start = readings in the database",
            m.get(("stagewell_readings_stored_total", "")) == stored_since_start,
            (m.get(("stagewell_readings_stored_total", "")), stored_since_start))
    if stored_since_start:
        for flag, in db_rows(db, "SELECT name FROM flag_names"):
            n = ds.count(db, "SELECT count(*) FROM discharge WHERE ',' || flags || ',' LIKE ?",
                         (f"%,{flag},%",))
            R.check(f"flagged {flag} = database", m.get(("stagewell_readings_flagged_total",
                                                        f'flag="{flag}"')) == n)
    size = os.path.getsize(db)
    R.check("database size = the file's size",
            m.get(("stagewell_database_size_bytes", 'file="database"')) == size)
    last = db_rows(db, "SELECT max(unix_time) FROM discharge WHERE site = 'channel'")[0][0]
    R.close("age of channel's latest reading",
            m.get(("stagewell_site_reading_age_seconds", 'site="channel"')),
            time.time() - last, 0, 10.0)
    R.check("no age for a site without readings",
            ("stagewell_site_reading_age_seconds", 'site="silent"') not in m)
    folder = os.path.join(os.path.dirname(db), "..", "incoming")
    folder_label = 'source="folder:' + os.path.normpath(os.path.abspath(folder)) + '"'
    lags = [k[1] for k in m if k[0] == "stagewell_source_progress_age_seconds"]
    R.check("the drop folder's lag is reported, once for the folder (not per finished file)",
            lags == [folder_label], str(lags))
    # The latest reading of each site, as the database holds it; units as UCUM codes.
    for site in ("channel", "canal"):
        rows = db_rows(db, "SELECT discharge, stage FROM discharge WHERE site = ? "
                           "ORDER BY time_ms DESC LIMIT 1", (site,))
        if not rows:
            continue
        discharge, stage = rows[0]
        got = m.get(("stagewell_site_latest_discharge", f'site="{site}",unit="m3/s"'))
        R.check(f"latest discharge of {site} = database", got is not None and discharge is not None
                and abs(got - discharge) <= 1e-9 * abs(discharge), (got, discharge))
        unit = db_rows(db, "SELECT stage_unit FROM site_details WHERE site = ?", (site,))[0][0]
        got = m.get(("stagewell_site_latest_stage", f'site="{site}",unit="{unit}"'))
        R.check(f"latest stage of {site} = database", got == stage, (got, stage))
    R.check("build info", any(k[0] == "stagewell_build_info" and k[1].startswith('version="')
                              and v == 1 for k, v in m.items()), str(list(m)[-3:]))
    # The Prometheus project's own parser (Debian's python3-prometheus-client) reads it all.
    from prometheus_client.openmetrics.parser import text_string_to_metric_families
    families = {f.name: f for f in text_string_to_metric_families(body.decode())}
    R.check("prometheus_client reads the build info as an info family",
            families.get("stagewell_build") is not None
            and families["stagewell_build"].type == "info", str(sorted(families)))
    latest = families.get("stagewell_site_latest_discharge")
    R.check("prometheus_client reads the latest discharges", latest is not None and all(
        (s.labels["site"], s.value) in [(site, db_rows(db, "SELECT discharge FROM discharge "
                                                       "WHERE site = ? ORDER BY time_ms DESC "
                                                       "LIMIT 1", (site,))[0][0])
                                        for site in ("channel", "canal")]
        for s in latest.samples), str(latest))
    # Prometheus text 0.0.4 when asked for text/plain only.
    status, headers, body = hs.get(port, "/metrics", headers={"Accept": "text/plain"})
    R.check("0.0.4 content type",
            headers.get("content-type") == "text/plain; version=0.0.4; charset=utf-8")
    text = body.decode()
    R.check("0.0.4: TYPE names the _total sample, no EOF",
            "# TYPE stagewell_readings_stored_total counter" in text and "# EOF" not in text)
    R.check("0.0.4: build info as a gauge named _info (that format has no info type)",
            "# TYPE stagewell_build_info gauge" in text)
    return m


def check_page(port):
    status, headers, body = hs.get(port, "/")
    R.check("page 200 HTML", status == 200 and headers["content-type"].startswith("text/html"))
    page = body.decode()
    R.check("page shows the caution", "Manning's equation" in page and "licensed engineer" in page)
    R.check("page is self-contained (no external URL)",
            re.search(r'(src|href)\s*=\s*"(https?:)?//', page) is None and "@import" not in page)
    status, headers, head_body = hs.get(port, "/", method="HEAD")
    R.check("HEAD: 200, no body, GET's length",
            status == 200 and head_body == b"" and int(headers["content-length"]) == len(body))


def ms(text):
    """RFC 3339 UTC text -> ms since the epoch (Python's datetime, independent of the service)."""
    when = datetime.datetime.strptime(text, "%Y-%m-%dT%H:%M:%SZ")
    return int(when.replace(tzinfo=datetime.timezone.utc).timestamp() * 1000)


def add_alarm_events(db):
    """Alarm events written straight into the table behind the `alarms` view (schema/003): an open
    and a cleared alarm of one site, an open one of another."""
    con = sqlite3.connect(db)
    key = dict(con.execute("SELECT id, site_key FROM sites"))
    rows = [(key["channel"], "high_flow", ms("2026-05-01T10:00:00Z"), None, 0.52, 0.5),
            (key["channel"], "low_flow", ms("2026-05-01T08:00:00Z"), ms("2026-05-01T09:00:00Z"),
             0.1, 0.2),
            (key["canal"], "stale", ms("2026-05-01T11:00:00Z"), None, 900.0, 600.0)]
    con.executemany("INSERT INTO alarm_events (site_key, kind, raised_ms, cleared_ms, value, "
                    "threshold) VALUES (?, ?, ?, ?, ?, ?)", rows)
    con.commit()
    con.close()


def main():
    args = ds.parse_args()
    stagewelld, _ = ds.programs(args)
    with tempfile.TemporaryDirectory() as tmp:
        port = hs.free_port()
        config = hs.write_config(tmp, port)
        db = os.path.join(tmp, "db", "stagewell.db")
        channel, canal = series()
        ds.drop_file(os.path.join(tmp, "incoming"), "channel.csv", hs.csv_text("channel", channel))
        ds.drop_file(os.path.join(tmp, "incoming"), "canal.csv", hs.csv_text("canal", canal))
        log = os.path.join(tmp, "daemon.log")
        with ds.Daemon(stagewelld, config, log).start() as daemon:
            R.check("http port opens", hs.wait_for_port(port))
            stored = ds.wait_until(lambda: ds.count(db, "SELECT count(*) FROM discharge") ==
                                   2 * MINUTES, 60)
            R.check("readings stored", stored, ds.count(db, "SELECT count(*) FROM discharge"))
            check_sites(port, db, channel)
            check_readings(port, db)
            check_daily(port, db)
            m = check_metrics(port, db, 2 * MINUTES)
            R.check("alarms gauge 1: the view is there",
                    m.get(("stagewell_alarms_available", "")) == 1)
            check_page(port)
            # A reload (SIGHUP) closes and reopens the server; the counters carry on.
            daemon.signal(signal.SIGHUP)
            R.check("reloaded", ds.wait_until(lambda: "reloaded;" in daemon.log(), 20))
            R.check("http port open after the reload", hs.wait_for_port(port))
            status, headers, body = hs.get(port, "/metrics")
            m = parse_metrics(body.decode())
            R.check("stored counter carried across the reload",
                    m.get(("stagewell_readings_stored_total", "")) == 2 * MINUTES)
            R.check("daemon stops cleanly", daemon.stop() == 0, daemon.log()[-2000:])
        add_alarm_events(db)
        with ds.Daemon(stagewelld, config, log).start() as daemon:
            R.check("http port opens again", hs.wait_for_port(port))
            m = check_metrics(port, db, 0)  # counters start again at 0: nothing new was read
            R.check("alarms available", m.get(("stagewell_alarms_available", "")) == 1)
            R.check("open alarm = 1", m.get(("stagewell_alarm_active_total", "")) is None and
                    m.get(("stagewell_alarm_active", 'site="channel",kind="high_flow"')) == 1)
            R.check("cleared alarm = 0",
                    m.get(("stagewell_alarm_active", 'site="channel",kind="low_flow"')) == 0)
            R.check("other site's alarm = 1",
                    m.get(("stagewell_alarm_active", 'site="canal",kind="stale"')) == 1)
            status, data = hs.get_json(port, "/api/sites")
            by_id = {s["id"]: s for s in data["sites"]}
            R.check("api: open alarms only", by_id["channel"]["alarms"] == [
                {"kind": "high_flow", "raised": "2026-05-01T10:00:00Z", "value": 0.52,
                 "threshold": 0.5, "unit": "m3/s"}], by_id["channel"]["alarms"])
            R.check("api: the other site's open alarm", by_id["canal"]["alarms"] == [
                {"kind": "stale", "raised": "2026-05-01T11:00:00Z", "value": 900.0,
                 "threshold": 600.0, "unit": "s"}], by_id["canal"]["alarms"])
            R.check("api: no alarm on the silent site", by_id["silent"]["alarms"] == [])
            R.check("api: alarms available", data["alarms_available"] is True)
            R.check("daemon stops cleanly (2)", daemon.stop() == 0, daemon.log()[-2000:])
    ds.exit_with(R)


if __name__ == "__main__":
    main()
