"""Two plants ship their records to one PostgreSQL warehouse (docs/warehouse.md): each plant's
rows of `discharge`, `daily`, `alarms`, `rejects` and `site_details` there must equal its local
SQLite views, value for value (floats bit for bit), with nothing missing and nothing twice, both
after a first one-shot `stagewell warehouse ship` and while two `stagewelld` services ship
continuously; again after late readings are stored behind what was shipped, and after a history
change recomputes readings (SIGHUP on one plant, `stagewell recompute` and a one-shot ship on the
other); and once more after `warehouse:` is taken out of a plant's configuration and put back.
Around it: `warehouse check` (text and --json), the warehouse metrics, a password in the
connection string refused without being repeated, a wrong or missing password file, a one-shot
ship refused beside a running service, a second store under a taken plant name refused, and the
analyst's read-only role as docs/operations.md sets it up.

References: PostgreSQL 15 itself (a throwaway cluster, warehouse_support.py) read with psycopg2,
an independent client; the local views read with Python's sqlite3 module; Manning's equation
Q = (1/n) A R^(2/3) S^(1/2), SI (common practice; V. T. Chow, Open-Channel Hydraulics, 1959,
ch. 5) for the recomputed values; the Prometheus project's parser (python3-prometheus-client) for
the metrics. The plants, sites and readings are invented.
"""
import datetime
import math
import os
import re
import signal
import socket
import sys
import tempfile
import time

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import daemon_support as ds  # noqa: E402
import warehouse_support as ws  # noqa: E402

START_MS = 1775433600000  # 2026-04-06T00:00:00Z (Python: datetime(2026,4,6,tzinfo=utc))
MINUTE_MS = 60_000
DAY_MS = 86_400_000
DAYS = 3
UPPER, LOWER = "upper-works", "lower-works"  # the two plants (invented)

# Upper works: `intake` (rectangular concrete, with a high-flow alarm and an upper stage bound)
# and `outfall` (trapezoidal). Lower works: its own `intake` (the same id, another channel) and
# `spillway` (a circular culvert, with a low-flow alarm).
INTAKE_W, INTAKE_H, INTAKE_S = 1.6, 1.2, 0.0012  # m, m, m/m
N_BEFORE, N_AFTER = 0.014, 0.022
CHANGE_MS = START_MS + DAY_MS + DAY_MS // 2  # 2026-04-07T12:00:00Z
LOWER_N_AFTER = 0.030
LOWER_CHANGE_MS = START_MS + 2 * DAY_MS  # 2026-04-08T00:00:00Z

UPPER_SITES = f"""sites:
  - id: intake
    name: Upper intake flume
    location: {{latitude: 12.345, longitude: -67.891}}
    datum: flume sill
    section: {{shape: rectangular, width: {INTAKE_W}, height: {INTAKE_H}}}
    roughness: {N_BEFORE}
    slope: {INTAKE_S}
    checks: {{max_stage: 1.0}}
    alarms:
      high_flow: {{above: 1.5, hysteresis: 0.1, hold: 5m}}
    # (history)
  - id: outfall
    section: {{shape: trapezoidal, width: 2.0, side_slope: 1.5, height: 1.5}}
    roughness: 0.025
    slope: 0.0008
"""
UPPER_CHANGE = f"""    changes:
      - from: {ds.iso(CHANGE_MS)}
        roughness: {N_AFTER}
"""
LOWER_SITES = """sites:
  - id: intake
    section: {shape: trapezoidal, width: 1.2, side_slope: 1.5, height: 1.5}
    roughness: 0.025
    slope: 0.0008
    # (history)
  - id: spillway
    section: {shape: circular, diameter: 1.0}
    roughness: 0.013
    slope: 0.003
    alarms:
      low_flow: {below: 0.05, hysteresis: 0.01, hold: 10m}
"""
LOWER_CHANGE = f"""    changes:
      - from: {ds.iso(LOWER_CHANGE_MS)}
        roughness: {LOWER_N_AFTER}
"""


def base_config(database, http_port=None):
    text = f"""units: metric
database: {database}
timezone: UTC
sources:
  - type: directory
    path: incoming
"""
    if http_port:
        text += f"http:\n  listen: 127.0.0.1:{http_port}\n"
    return text


def stage(site, i):
    """Invented stage, m, to the millimetre: a daily swing per site, minute i from START_MS."""
    phase = 2 * math.pi * i / 1440
    return {"upper/intake": 0.5 + 0.3 * math.sin(phase),
            "upper/outfall": 0.7 + 0.2 * math.sin(phase + 0.5),
            "lower/intake": 0.6 + 0.25 * math.sin(phase + 1.0),
            "lower/spillway": 0.3 + 0.2 * math.sin(phase + 2.0)}[site]


def day_file(plant, sites, day):
    """One day's CSV of minute readings for `sites` of plant `plant` ('upper' or 'lower'), with
    two lines that must be rejected and, on the upper intake's first day, one reading above its
    max_stage (no discharge); the lower spillway's first day has one reading with milliseconds."""
    lines = [b"site,time,stage"]
    for m in range(1440):
        i = day * 1440 + m
        for site in sites:
            value = round(stage(f"{plant}/{site}", i), 3)
            if plant == "upper" and site == "intake" and i == 100:
                value = 1.05  # above max_stage 1.0: out_of_range, discharge NULL
            lines.append(f"{site},{ds.iso(START_MS + i * MINUTE_MS)},{value}".encode())
            if plant == "lower" and site == "spillway" and i == 30:
                lines.append(f"spillway,{ds.iso(START_MS + i * MINUTE_MS + 30_250)},"
                             f"{value}".encode())
    lines.append(f"{sites[0]},{ds.iso(START_MS + day * DAY_MS + 7 * MINUTE_MS + 1)},"
                 "high".encode())  # a stage that is not a number: rejected
    lines.append(f"nowhere,{ds.iso(START_MS + day * DAY_MS)},0.5".encode())  # unknown site
    if plant == "lower" and day == 0:
        lines.append(b"spillway,2026-04-06T00:00:00Z,0.4\xff")  # not UTF-8: rejected as it is
    return b"\n".join(lines) + b"\n"


def manning_rect(depth, n):
    geometry, _ = ds.rectangular(INTAKE_W, INTAKE_H)
    area, perimeter, _ = geometry(depth)
    return area * (area / perimeter) ** (2 / 3) * math.sqrt(INTAKE_S) / n


def metrics(port):
    """{sample name: value} of GET /metrics, read by the Prometheus project's parser."""
    import http.client
    from prometheus_client.openmetrics.parser import text_string_to_metric_families
    con = http.client.HTTPConnection("127.0.0.1", port, timeout=10)
    try:
        con.request("GET", "/metrics", headers={"Accept": "application/openmetrics-text"})
        body = con.getresponse().read().decode()
    finally:
        con.close()
    out = {}
    for family in text_string_to_metric_families(body):
        for sample in family.samples:
            out[sample.name] = sample.value
    return out


def rfc3339_utc(text):
    return isinstance(text, str) and re.fullmatch(
        r"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d(\.\d{3})?Z", text) is not None


def unix_seconds(text):
    return datetime.datetime.strptime(text[:19], "%Y-%m-%dT%H:%M:%S").replace(
        tzinfo=datetime.timezone.utc).timestamp()


class Plant:
    """One plant's folder: config.yaml, db/flows.db, incoming/, warehouse.password. `key`
    ('upper' or 'lower') chooses its invented readings; `folder` defaults to it."""

    def __init__(self, root, name, key, sites_yaml, site_ids, cluster, http_port=None,
                 folder=None):
        self.name, self.key, self.sites_yaml, self.site_ids = name, key, sites_yaml, site_ids
        self.dir = os.path.join(root, folder or key)
        self.config = os.path.join(self.dir, "config.yaml")
        self.db = os.path.join(self.dir, "db", "flows.db")
        self.incoming = os.path.join(self.dir, "incoming")
        self.http_port = http_port
        self.cluster = cluster
        os.makedirs(self.incoming)
        os.makedirs(os.path.join(self.dir, "db"))
        cluster.write_password_file(os.path.join(self.dir, "warehouse.password"))
        self.write()

    def write(self, history=""):
        # The history belongs to the intake: in place of its `# (history)` line.
        sites = self.sites_yaml.replace("    # (history)\n", history)
        ds.write(self.config, base_config("db/flows.db", self.http_port) + sites
                 + ws.warehouse_yaml(self.cluster, self.name))

    def drop_day(self, day):
        ds.drop_file(self.incoming, f"day{day}.csv", day_file(self.key, self.site_ids, day))

    def file_path(self, day):
        path = os.path.join(self.dir, f"day{day}.csv")
        with open(path, "wb") as f:
            f.write(day_file(self.key, self.site_ids, day))
        return path

    def readings(self):
        return ds.count(self.db, "SELECT count(*) FROM discharge")


def expected_readings(plant_key, days):
    per_day = 1440 * 2
    extra = 1 if plant_key == "lower" and 0 in days else 0
    return per_day * len(days) + extra


def compare(r, label, plant):
    ws.compare_plant(r, f"{label} ({plant.name})", plant.db, plant.cluster, plant.name)
    ws.discharge_close(r, f"{label} ({plant.name})", plant.db, plant.cluster, plant.name)
    ws.reading_keys_once(r, f"{label} ({plant.name})", plant.cluster, plant.name)


def main():
    args = ds.parse_args()
    daemon_program, stagewell = ds.programs(args)
    r = ds.Results()
    started_at = time.time()
    with tempfile.TemporaryDirectory(prefix="stagewell-e2e-") as root, ws.cluster() as pg:
        http_port = ws.free_port()
        upper = Plant(root, UPPER, "upper", UPPER_SITES, ["intake", "outfall"], pg, http_port)
        lower = Plant(root, LOWER, "lower", LOWER_SITES, ["intake", "spillway"], pg)

        # ---- the configuration is checked ---------------------------------------------------
        done = ws.stagewell(stagewell, "check", "--config", upper.config)
        r.check("check: the upper plant's configuration is valid", done.returncode == 0,
                done.stderr + done.stdout)
        secret = "n0t-a-real-secret-8271"
        for form, conninfo in (
                # The password first: an error that shows only the start of a long value must
                # not show it either.
                ("keyword", f"password={secret} {pg.conninfo()}"),
                ("URI", f"postgresql://{ws.WRITER}:{secret}@/{ws.DATABASE}"
                        f"?host={pg.socket_dir}&port={pg.port}")):
            bad = os.path.join(root, f"password-in-{form}.yaml")
            ds.write(bad, base_config(upper.db) + UPPER_SITES
                     + f'warehouse:\n  postgresql: "{conninfo}"\n  plant: {UPPER}\n')
            done = ws.stagewell(stagewell, "check", "--config", bad)
            text = done.stderr + done.stdout
            r.check(f"check: a password in the {form} connection string is refused",
                    done.returncode != 0 and "password" in text and "password_file" in text,
                    f"exit {done.returncode}: {text}")
            r.check(f"check: the refusal names the line ({form})",
                    re.search(re.escape(bad) + r":\d+:\d+: warehouse\.postgresql", text)
                    is not None, text)
            r.check(f"check: the refusal does not repeat the password ({form})",
                    secret not in text, text)
        bad = os.path.join(root, "bad-plant.yaml")
        ds.write(bad, base_config(upper.db) + UPPER_SITES
                 + f'warehouse:\n  postgresql: "{pg.conninfo()}"\n  plant: "upper works"\n')
        done = ws.stagewell(stagewell, "check", "--config", bad)
        r.check("check: a plant name with a space is refused ([A-Za-z0-9._-]{1,64})",
                done.returncode != 0 and "warehouse.plant" in done.stderr + done.stdout,
                done.stderr + done.stdout)

        # ---- the upper plant's first day, stored without the service, shipped in one shot -------
        done = ws.stagewell(stagewell, "ingest", "--config", upper.config, "--quiet",
                            upper.file_path(0))
        r.check("ingest of the upper plant's first day", done.returncode == 0
                and upper.readings() == expected_readings("upper", [0]),
                f"exit {done.returncode}, {upper.readings()} readings: {done.stderr[-500:]}")
        code, report, text = ws.check_json(stagewell, upper.config)
        r.check("warehouse check before any shipment: exit 0 (connected, schema not created)",
                code == 0, text)
        report = report or {}
        r.check("check --json: connected", report.get("connected") is True, text)
        r.check("check --json: no schema yet (schema_version null)",
                "schema_version" in report and report["schema_version"] is None, text)
        r.check("check --json: the schema's name", report.get("schema") == ws.SCHEMA, text)
        r.check("check --json: the plant", report.get("plant") == UPPER, text)
        r.check("check --json: server_version 15.x",
                str(report.get("server_version", "")).startswith("15."), text)
        r.check("check --json: program_schema_version an integer >= 1",
                isinstance(report.get("program_schema_version"), int)
                and report["program_schema_version"] >= 1, text)
        r.check("check --json: every local reading is lag",
                report.get("lag_readings") == upper.readings(), f"{text} vs {upper.readings()}")
        r.check("check --json: other rows wait too", isinstance(report.get("lag_rows"), int)
                and report["lag_rows"] > 0, text)
        r.check("check --json: nothing shipped yet", "last_shipped" in report
                and report["last_shipped"] is None, text)
        r.check("check --json: no error", report.get("error") is None, text)
        plain = ws.stagewell(stagewell, "warehouse", "check", "--config", upper.config)
        r.check("check (text): says the schema is not created yet", plain.returncode == 0
                and ws.SCHEMA in plain.stdout and re.search(
                    r"not (yet )?(been )?created|does not exist|no schema", plain.stdout, re.I)
                is not None,
                plain.stdout + plain.stderr)
        r.check("nothing is created by check", not pg.rows(
            "SELECT 1 FROM information_schema.schemata WHERE schema_name = %s", (ws.SCHEMA,)))

        done = ws.stagewell(stagewell, "warehouse", "ship", "--config", upper.config)
        r.check("warehouse ship (one shot, no service running): exit 0", done.returncode == 0,
                done.stderr[-2000:] + done.stdout[-500:])
        r.check("warehouse ship: progress on stderr", done.stderr.strip() != "", done.stderr)
        code, report, text = ws.check_json(stagewell, upper.config)
        report = report or {}
        r.check("after the one-shot ship: lag 0", code == 0 and report.get("lag_readings") == 0
                and report.get("lag_rows") == 0, text)
        r.check("after the one-shot ship: schema current",
                report.get("schema_version") is not None
                and report.get("schema_version") == report.get("program_schema_version"), text)
        r.check("after the one-shot ship: last_shipped is RFC 3339 UTC",
                rfc3339_utc(report.get("last_shipped")), text)
        if rfc3339_utc(report.get("last_shipped")):
            shipped = unix_seconds(report["last_shipped"])
            r.check("last_shipped is now, not a reading's time",
                    started_at - 2 <= shipped <= time.time() + 2, report["last_shipped"])
        compare(r, "one-shot ship", upper)
        out_of_range = pg.rows(f'SELECT discharge, flags FROM "{ws.SCHEMA}".discharge '
                               "WHERE plant = %s AND site = 'intake' AND time_ms = %s",
                               (UPPER, START_MS + 100 * MINUTE_MS))
        r.check("the out-of-range reading arrives with no discharge (NULL) and its flag",
                bool(out_of_range) and out_of_range[0][0] is None
                and "out_of_range" in out_of_range[0][1],
                str(out_of_range))
        done = ws.stagewell(stagewell, "warehouse", "ship", "--config", upper.config)
        r.check("a second one-shot ship: exit 0, nothing changes", done.returncode == 0,
                done.stderr[-1000:])
        compare(r, "second one-shot ship", upper)

        # ---- two services ship continuously ------------------------------------------------
        env = ws.daemon_env()
        with ds.Daemon(daemon_program, upper.config, os.path.join(root, "upper.log"),
                       env) as upper_d, \
             ds.Daemon(daemon_program, lower.config, os.path.join(root, "lower.log"),
                       env) as lower_d:
            upper_d.start()
            lower_d.start()
            r.check("both services start", ds.wait_until(
                lambda: "started" in upper_d.log() and "started" in lower_d.log(), 60),
                upper_d.log()[-1000:] + lower_d.log()[-1000:])
            done = ws.stagewell(stagewell, "warehouse", "ship", "--config", upper.config)
            r.check("warehouse ship refused while the service runs on the database (exit 1)",
                    done.returncode == 1, f"exit {done.returncode}: {done.stderr[-500:]}")
            for day in range(1, DAYS):
                upper.drop_day(day)
            for day in range(DAYS):
                lower.drop_day(day)
            for plant in (upper, lower):
                want = expected_readings(plant.key, range(DAYS))
                r.check(f"{plant.name}: every reading stored locally", ds.wait_until(
                    lambda: plant.readings() == want, 180, 0.2),
                    f"{plant.readings()} of {want}")
            for plant in (upper, lower):
                ok, last = ws.wait_for_lag_zero(stagewell, plant.config, 120)
                r.check(f"{plant.name}: warehouse check reaches lag 0 within 120 s", ok, str(last))
            for plant in (upper, lower):
                compare(r, "services shipping", plant)
            r.check("the two plants' intakes are kept apart",
                    {row[0]: row[1] for row in pg.rows(
                        f'SELECT plant, count(*) FROM "{ws.SCHEMA}".discharge WHERE site = '
                        "'intake' GROUP BY plant")} == {UPPER: DAYS * 1440, LOWER: DAYS * 1440})
            r.check("some alarms to compare (upper: high_flow, lower: low_flow)",
                    {row[0] for row in pg.rows(f'SELECT DISTINCT kind FROM "{ws.SCHEMA}".alarms')}
                    >= {"high_flow", "low_flow"})
            r.check("some rejects to compare (two a day, and the line that is not UTF-8)",
                    pg.rows(f'SELECT count(*) FROM "{ws.SCHEMA}".rejects')[0][0]
                    == 2 * DAYS * 2 + 1)
            raw = pg.rows(f'SELECT raw FROM "{ws.SCHEMA}".rejects WHERE plant = %s AND '
                          "kind = 'not_text'", (LOWER,))
            r.check("the line that is not UTF-8 arrives with U+FFFD for its bad byte",
                    [row[0] for row in raw] == ["spillway,2026-04-06T00:00:00Z,0.4\ufffd"],
                    str(raw))
            plants = {row[0]: row[1] for row in pg.rows(
                f'SELECT plant, last_shipped FROM "{ws.SCHEMA}".plants')}
            r.check("plants: one row per shipping service, last_shipped RFC 3339",
                    set(plants) == {UPPER, LOWER} and all(map(rfc3339_utc, plants.values())),
                    str(plants))
            versions = pg.rows(f'SELECT DISTINCT d.plant, d.version, v.version IS NOT NULL FROM '
                               f'"{ws.SCHEMA}".discharge d LEFT JOIN "{ws.SCHEMA}".versions v '
                               "ON v.plant = d.plant AND v.site = d.site AND "
                               "v.version = d.version")
            r.check("versions: every reading's version is there", versions and all(
                row[2] for row in versions), str(versions))

            # The metrics of the upper service (its daemon shipped days 1 and 2).
            m = {}
            try:
                m = metrics(http_port)
            except OSError as e:
                r.check("metrics readable", False, str(e))
            r.check("metrics: stagewell_warehouse_connected 1",
                    m.get("stagewell_warehouse_connected") == 1, str(m.get(
                        "stagewell_warehouse_connected")))
            r.check("metrics: stagewell_warehouse_lag_readings 0",
                    m.get("stagewell_warehouse_lag_readings") == 0,
                    str(m.get("stagewell_warehouse_lag_readings")))
            r.check("metrics: shipped_readings_total counts at least what this service stored",
                    (m.get("stagewell_warehouse_shipped_readings_total") or 0)
                    >= expected_readings("upper", [1, 2]),
                    str(m.get("stagewell_warehouse_shipped_readings_total")))
            last = m.get("stagewell_warehouse_last_shipped_timestamp_seconds")
            r.check("metrics: last shipment's time is recent",
                    last is not None and started_at - 2 <= last <= time.time() + 2, str(last))

            # ---- late readings: stored behind what was shipped, they must follow ----------------
            late = ["site,time,stage"] + [
                f"outfall,{ds.iso(START_MS + (300 + k) * MINUTE_MS + 30_000)},"
                f"{round(stage('upper/outfall', 300 + k), 3)}" for k in range(20)]
            want = upper.readings() + 20
            ds.drop_file(upper.incoming, "late.csv", "\n".join(late) + "\n")
            r.check("late readings stored locally", ds.wait_until(
                lambda: upper.readings() == want, 60, 0.1), f"{upper.readings()} of {want}")
            ok, last = ws.wait_for_lag_zero(stagewell, upper.config, 60)
            r.check("late readings: lag 0 again within 60 s", ok, str(last))
            compare(r, "late readings shipped", upper)
            r.check("the late readings are in the warehouse", pg.rows(
                f'SELECT count(*) FROM "{ws.SCHEMA}".discharge WHERE plant = %s AND '
                "site = 'outfall' AND time_ms %% 60000 = 30000", (UPPER,))[0][0] == 20)

            # ---- a history change on the upper plant, by SIGHUP -------------------------------
            before = dict(((s, t), q) for s, t, q in pg.rows(
                f'SELECT site, time_ms, discharge FROM "{ws.SCHEMA}".discharge '
                "WHERE plant = %s AND site = 'intake'", (UPPER,)))
            upper.write(UPPER_CHANGE)
            upper_d.signal(signal.SIGHUP)
            r.check("SIGHUP: the upper service recomputes", ds.wait_until(
                lambda: "recomputed" in upper_d.log(), 300, 0.2), upper_d.log()[-2000:])
            ok, last = ws.wait_for_lag_zero(stagewell, upper.config, 120)
            r.check("after the recomputation: lag 0 again within 120 s", ok, str(last))
            compare(r, "after SIGHUP's recomputation", upper)
            after = {(s, t): (stage_m, q) for s, t, stage_m, q in pg.rows(
                f'SELECT site, time_ms, stage, discharge FROM "{ws.SCHEMA}".discharge '
                "WHERE plant = %s AND site = 'intake'", (UPPER,))}
            worst, changed, unchanged_before = 0.0, 0, True
            for (site, t), (stage_m, q) in after.items():
                if q is None:
                    continue
                n = N_AFTER if t >= CHANGE_MS else N_BEFORE
                want = manning_rect(stage_m, n)
                worst = max(worst, abs(q - want) / want)
                if t >= CHANGE_MS:
                    changed += before.get((site, t)) != q
                elif before.get((site, t)) != q:
                    unchanged_before = False
            # The rating table's interpolation is within 1e-6 of the formula (docs/hydraulics.md).
            r.check("warehouse discharge after the change: Manning's equation with the n in force",
                    worst < 1e-5, f"worst relative error {worst:.2e}")
            r.check("every reading from the change on replaced in the warehouse",
                    changed == sum(1 for (s, t) in after if t >= CHANGE_MS),
                    f"{changed} replaced")
            r.check("readings before the change untouched", unchanged_before)
            # A stop ends the shipping thread too, promptly and cleanly (in the checking build a
            # sanitizer's report would make the exit status non-zero).
            for name, d in ((UPPER, upper_d), (LOWER, lower_d)):
                r.check(f"SIGTERM: the {name} service exits 0", d.stop() == 0, d.log()[-1500:])

        # ---- a history change on the lower plant by `stagewell recompute`, shipped in one shot --
        lower.write(LOWER_CHANGE)
        done = ws.stagewell(stagewell, "recompute", "--config", lower.config, "--site", "intake")
        r.check("stagewell recompute on the lower plant", done.returncode == 0,
                done.stderr[-1000:] + done.stdout[-1000:])
        code, report, text = ws.check_json(stagewell, lower.config)
        report = report or {}
        # The lower intake's third day: from the change to the end of the readings.
        r.check("after the recompute: the recomputed readings are lag",
                report.get("lag_readings") == 1440, text)
        done = ws.stagewell(stagewell, "warehouse", "ship", "--config", lower.config)
        r.check("one-shot ship of the recomputed readings: exit 0", done.returncode == 0,
                done.stderr[-1000:])
        ok, last = ws.wait_for_lag_zero(stagewell, lower.config, 30)
        r.check("lower plant: lag 0 after the one-shot ship", ok, str(last))
        compare(r, "after stagewell recompute and ship", lower)
        compare(r, "the upper plant unaffected by the lower's shipment", upper)

        # ---- check's failures: a wrong password, a missing password file, no warehouse ---------
        pg.write_password_file(os.path.join(lower.dir, "warehouse.password"), "not-the-password")
        code, report, text = ws.check_json(stagewell, lower.config)
        report = report or {}
        r.check("wrong password: check exits 1, connected false, an error",
                code == 1 and report.get("connected") is False and report.get("error"), text)
        r.check("wrong password: the lag is still reported from the local store",
                report.get("lag_readings") == 0 and isinstance(report.get("lag_rows"), int), text)
        os.unlink(os.path.join(lower.dir, "warehouse.password"))
        code, report, text = ws.check_json(stagewell, lower.config)
        r.check("missing password file: check exits 1 and names the file",
                code == 1 and "warehouse.password" in text, text)
        plain_config = os.path.join(root, "no-warehouse.yaml")
        ds.write(plain_config, base_config(upper.db) + UPPER_SITES)
        done = ws.stagewell(stagewell, "warehouse", "check", "--config", plain_config)
        r.check("no warehouse configured: check exits 1 and says so", done.returncode == 1
                and "warehouse" in done.stderr + done.stdout, done.stderr + done.stdout)
        # A second store under a plant name that another store ships as is refused, not mixed.
        copycat = Plant(root, UPPER, "upper", UPPER_SITES, ["intake", "outfall"], pg,
                        folder="copycat")
        done = ws.stagewell(stagewell, "ingest", "--config", copycat.config, "--quiet",
                            copycat.file_path(0))
        before = pg.rows(f'SELECT count(*) FROM "{ws.SCHEMA}".discharge WHERE plant = %s',
                         (UPPER,))
        done = ws.stagewell(stagewell, "warehouse", "ship", "--config", copycat.config)
        r.check("another store under the same plant name: ship refused (exit 1), says why",
                done.returncode == 1 and "another store" in done.stderr, done.stderr[-1000:])
        compare(r, "after the refused second store", upper)
        r.check("the refused store changed nothing", before == pg.rows(
            f'SELECT count(*) FROM "{ws.SCHEMA}".discharge WHERE plant = %s', (UPPER,)))

        unnamed = os.path.join(upper.dir, "unnamed.yaml")
        ds.write(unnamed, base_config("db/flows.db") + UPPER_SITES
                 + ws.warehouse_yaml(pg, UPPER).replace(f"  plant: {UPPER}\n", ""))
        code, report, text = ws.check_json(stagewell, unnamed)
        r.check("without plant: the plant is this machine's host name (up to its first dot)",
                (report or {}).get("plant") == socket.gethostname().split(".")[0], text)
        plain = ws.stagewell(stagewell, "warehouse", "check", "--config", upper.config)
        r.check("check (text) once shipped: exit 0, names the plant, nothing still to ship",
                plain.returncode == 0 and UPPER in plain.stdout
                and re.search(r"still to ship:\s+0 readings, 0 other rows", plain.stdout)
                is not None, plain.stdout + plain.stderr)

        # ---- the analyst's role, as docs/warehouse.md sets it up -------------------------------
        views = ["discharge", "daily", "alarms", "rejects", "site_details", "versions", "plants"]
        import contextlib
        with contextlib.closing(pg.connect(dbname=ws.DATABASE)) as con, con.cursor() as cur:
            cur.execute("CREATE ROLE analyst LOGIN PASSWORD 'analyst-pw'")
            # The writer owns the schema: it grants, as the documentation says to.
            cur.execute(f"SET ROLE {ws.WRITER}")
            cur.execute(f"GRANT USAGE ON SCHEMA {ws.SCHEMA} TO analyst")
            cur.execute(f"GRANT SELECT ON {', '.join(f'{ws.SCHEMA}.{v}' for v in views)} "
                        "TO analyst")
        with contextlib.closing(pg.connect(user="analyst", password="analyst-pw",
                                           dbname=ws.DATABASE)) as con, con.cursor() as cur:
            cur.execute(f"SELECT count(*) FROM {ws.SCHEMA}.discharge WHERE plant = %s", (UPPER,))
            r.check("analyst reads the discharge view", cur.fetchone()[0] == upper.readings())
            import psycopg2
            try:
                cur.execute(f"SELECT count(*) FROM {ws.SCHEMA}.readings")
                r.check("analyst cannot read the tables underneath", False, "readings readable")
            except psycopg2.errors.InsufficientPrivilege:
                r.check("analyst cannot read the tables underneath", True)
            con.rollback()
            try:
                cur.execute(f"DELETE FROM {ws.SCHEMA}.discharge")
                r.check("analyst cannot change the views", False, "DELETE accepted")
            except psycopg2.Error:
                r.check("analyst cannot change the views", True)

        # ---- `warehouse:` taken out and put back: the store forgets its queue (schema/010), and
        # is then sent whole again, under its own plant name -----------------------------------
        pg.write_password_file(os.path.join(lower.dir, "warehouse.password"))
        no_warehouse = os.path.join(lower.dir, "no-warehouse.yaml")
        ds.write(no_warehouse, base_config("db/flows.db") + LOWER_SITES)
        done = ws.stagewell(stagewell, "ingest", "--config", no_warehouse, "--quiet",
                            lower.file_path(2))
        r.check("ingest with a configuration without warehouse: (nothing new) exit 0",
                done.returncode == 0, done.stderr[-500:])
        done = ws.stagewell(stagewell, "warehouse", "ship", "--config", lower.config)
        r.check("warehouse put back: the one-shot ship sends the record again under the same "
                "plant name", done.returncode == 0 and f"shipped {lower.readings()} readings"
                in done.stdout, f"exit {done.returncode}: {done.stdout[-300:]} "
                f"{done.stderr[-600:]}")
        compare(r, "warehouse taken out and put back", lower)
    return r.finish()


if __name__ == "__main__":
    sys.exit(main())
