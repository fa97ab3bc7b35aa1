"""The warehouse survives what goes wrong (docs/warehouse.md, "Exactly once"):

(a) kill -9 of `stagewelld` in the middle of a backfill. A long history (two sites, a few hundred
    thousand minute readings) is stored first without a warehouse; then `warehouse:` is added and
    the service started, and killed -9 while the warehouse holds some of the history but not all,
    twice; after the last restart, once `warehouse check` reports lag 0, the warehouse's rows
    equal the local views: nothing missing, nothing twice.
(b) PostgreSQL stopped for 20 s while readings keep arriving through a followed file: they keep
    being stored locally, the service stays up and answers /metrics (with
    stagewell_warehouse_connected 0), `warehouse check` says it cannot connect but still reports
    the lag; PostgreSQL started again, the lag returns to 0 and the two are equal again.
(c) A warehouse that accepts the connection and then never answers (a listening socket of this
    script's that reads nothing and says nothing, as a hung server or a black-holed route does):
    the service still stores readings, still answers /metrics, and stops at once on SIGTERM;
    `warehouse check` gives up within its connection timeout.

References: PostgreSQL 15 itself (a throwaway cluster, warehouse_support.py) read with psycopg2,
an independent client; the local views read with Python's sqlite3 module; the readings are the
lines this script wrote (invented). Every wait is bounded and says what it expected.
"""
import http.client
import math
import os
import socket
import sys
import threading
import tempfile
import time

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import daemon_support as ds  # noqa: E402
import warehouse_support as ws  # noqa: E402

PLANT = "river-mill"  # invented
SCHEMA = "mill_records"  # not the default schema: the `schema` key is used throughout
START_MS = 1748736000000  # 2025-06-01T00:00:00Z (Python: datetime(2025,6,1,tzinfo=utc))
MINUTE_MS = 60_000
HISTORY_MINUTES = 150_000  # about 104 days, per site
SITES = ("headrace", "tailrace")
LIVE_START_MS = START_MS + HISTORY_MINUTES * MINUTE_MS
OUTAGE_S = 20

SITES_YAML = """sites:
  - id: headrace
    section: {shape: rectangular, width: 2.5, height: 1.8}
    roughness: 0.015
    slope: 0.0010
    alarms:
      high_flow: {above: 4.0, hysteresis: 0.3, hold: 10m}
  - id: tailrace
    section: {shape: trapezoidal, width: 3.0, side_slope: 2.0, height: 2.0}
    roughness: 0.028
    slope: 0.0006
"""


def config_text(http_port, warehouse=""):
    return f"""units: metric
database: db/flows.db
timezone: UTC
sources:
  - type: tail
    path: logger/live.csv
    site: headrace
http:
  listen: 127.0.0.1:{http_port}
{SITES_YAML}{warehouse}"""


def stage(site, i):
    """Invented stage, m, to the millimetre: a daily swing, and a slower seasonal one."""
    base = 0.8 if site == "headrace" else 0.6
    return round(base + 0.3 * math.sin(2 * math.pi * i / 1440)
                 + 0.2 * math.sin(2 * math.pi * i / 43200), 3)


def metrics(port):
    """{sample name: value} of GET /metrics (Prometheus project's parser), or None when the
    service does not answer within 5 s."""
    from prometheus_client.openmetrics.parser import text_string_to_metric_families
    con = http.client.HTTPConnection("127.0.0.1", port, timeout=5)
    try:
        con.request("GET", "/metrics", headers={"Accept": "application/openmetrics-text"})
        body = con.getresponse().read().decode()
    except OSError:
        return None
    finally:
        con.close()
    return {s.name: s.value for f in text_string_to_metric_families(body) for s in f.samples}


class SilentServer:
    """A TCP listener on loopback that accepts every connection and never reads or writes: to a
    client it looks like a server that hangs after the connection is made. At most 16 held."""

    def __init__(self):
        self.listener = socket.socket()
        self.listener.bind(("127.0.0.1", 0))
        self.listener.listen(16)
        self.listener.settimeout(0.2)
        self.port = self.listener.getsockname()[1]
        self.held = []
        self.stopping = False
        self.thread = threading.Thread(target=self._run, daemon=True)
        self.thread.start()

    def _run(self):
        while not self.stopping:
            try:
                connection, _ = self.listener.accept()
            except OSError:
                continue
            if len(self.held) < 16:
                self.held.append(connection)
            else:
                connection.close()

    def close(self):
        self.stopping = True
        self.thread.join(timeout=5)
        for connection in self.held:
            connection.close()
        self.listener.close()


def main():
    args = ds.parse_args()
    daemon_program, stagewell = ds.programs(args)
    r = ds.Results()
    with tempfile.TemporaryDirectory(prefix="stagewell-e2e-") as root, ws.cluster() as pg:
        http_port = ws.free_port()
        config = os.path.join(root, "config.yaml")
        db = os.path.join(root, "db", "flows.db")
        live = os.path.join(root, "logger", "live.csv")
        ds.write(live, "time,stage\n")
        os.makedirs(os.path.join(root, "db"))
        pg.write_password_file(os.path.join(root, "warehouse.password"))

        # ---- the history, stored without a warehouse ---------------------------------------
        ds.write(config, config_text(http_port))
        history = os.path.join(root, "history.csv")
        with open(history, "w") as f:
            f.write("site,time,stage\n")
            for i in range(HISTORY_MINUTES):
                t = ds.iso(START_MS + i * MINUTE_MS)
                for site in SITES:
                    f.write(f"{site},{t},{stage(site, i)}\n")
        total = HISTORY_MINUTES * len(SITES)
        done = ws.stagewell(stagewell, "ingest", "--config", config, "--quiet", history,
                            timeout=900)
        r.check("the history stored without a warehouse", done.returncode == 0
                and ds.count(db, "SELECT count(*) FROM discharge") == total,
                f"exit {done.returncode}: {done.stderr[-500:]}")

        def in_warehouse():
            try:
                return pg.rows(f'SELECT count(*) FROM "{SCHEMA}".discharge WHERE plant = %s',
                               (PLANT,))[0][0]
            except ws.psycopg2.Error:
                return 0  # the schema is not there yet

        # ---- (a) kill -9 in the middle of the backfill ---------------------------------------
        ds.write(config, config_text(http_port, ws.warehouse_yaml(pg, PLANT, schema=SCHEMA)))
        log = os.path.join(root, "daemon.log")
        env = ws.daemon_env()
        with ds.Daemon(daemon_program, config, log, env) as daemon:
            kills_mid_backfill = 0
            for share in (0.1, 0.5):
                daemon.start()
                reached = ds.wait_until(lambda: in_warehouse() >= share * total, 300, 0.02)
                daemon.kill9()
                held = in_warehouse()
                print(f"kill -9 with {held} of {total} readings in the warehouse", flush=True)
                r.check(f"the backfill reaches {share:.0%} of the history within 300 s",
                        reached, f"{held} of {total}; log: {daemon.log()[-1500:]}")
                kills_mid_backfill += 0 < held < total
            r.check("at least one kill landed while the warehouse held some but not all",
                    kills_mid_backfill >= 1, f"{kills_mid_backfill} (the backfill may be done in "
                    "one transaction, or faster than this poll)")
            daemon.start()
            ok, last = ws.wait_for_lag_zero(stagewell, config, 300)
            r.check("after the kills: lag 0 within 300 s", ok, str(last))
            r.check("the service still runs", daemon.running(), daemon.log()[-1500:])
            schemas = {row[0] for row in pg.rows(
                "SELECT schema_name FROM information_schema.schemata WHERE schema_name IN "
                "(%s, %s)", (SCHEMA, ws.SCHEMA))}
            r.check(f"the warehouse is in the configured schema {SCHEMA}, not the default",
                    schemas == {SCHEMA}, str(schemas))
            r.check("after the kills: every reading once in the warehouse",
                    in_warehouse() == total, f"{in_warehouse()} of {total}")
            ws.compare_plant(r, "after kill -9 in the backfill", db, pg, PLANT, schema=SCHEMA)
            ws.discharge_close(r, "after kill -9 in the backfill", db, pg, PLANT, schema=SCHEMA)
            ws.reading_keys_once(r, "after kill -9 in the backfill", pg, PLANT, SCHEMA)

            # ---- (b) PostgreSQL away for 20 s while readings arrive -----------------------------
            fed = 0

            def feed(n):
                nonlocal fed
                lines = []
                for _ in range(n):
                    i = HISTORY_MINUTES + fed
                    lines.append(f"{ds.iso(START_MS + i * MINUTE_MS)},{stage('headrace', i)}\n")
                    fed += 1
                ds.append(live, "".join(lines))

            def local_count():
                return ds.count(db, "SELECT count(*) FROM discharge")

            feed(10)
            r.check("live readings stored before the outage",
                    ds.wait_until(lambda: local_count() == total + fed, 30), str(local_count()))
            ok, last = ws.wait_for_lag_zero(stagewell, config, 60)
            r.check("lag 0 before the outage", ok, str(last))
            r.check("PostgreSQL stopped", pg.stop("fast"))
            outage_start = time.monotonic()
            stored_during = []
            answered_during = []
            while time.monotonic() - outage_start < OUTAGE_S:
                feed(5)
                before = total + fed
                stored_during.append(ds.wait_until(lambda: local_count() == before, 10, 0.05)
                                     is not None)
                answered_during.append(metrics(http_port))
                time.sleep(0.5)
            r.check("during the outage every batch of live readings was stored locally",
                    stored_during and all(stored_during),
                    f"{stored_during.count(False)} of {len(stored_during)} batches not stored "
                    "within 10 s")
            r.check("the service stays up through the outage", daemon.running(),
                    daemon.log()[-1500:])
            r.check("the service answers /metrics throughout the outage",
                    all(m is not None for m in answered_during),
                    f"{sum(m is None for m in answered_during)} of {len(answered_during)} "
                    "requests unanswered within 5 s")
            last_m = answered_during[-1] if answered_during else None
            r.check("metrics during the outage: stagewell_warehouse_connected 0",
                    last_m is not None and last_m.get("stagewell_warehouse_connected") == 0,
                    str(last_m))
            r.check("metrics during the outage: the lag grows",
                    last_m is not None
                    and (last_m.get("stagewell_warehouse_lag_readings") or 0) > 0, str(last_m))
            code, report, text = ws.check_json(stagewell, config)
            report = report or {}
            r.check("warehouse check during the outage: exit 1, connected false, an error",
                    code == 1 and report.get("connected") is False
                    and bool(report.get("error")), text)
            r.check("warehouse check during the outage: the lag from the local store",
                    isinstance(report.get("lag_readings"), int)
                    and report["lag_readings"] > 0, text)

            pg.start()
            feed(5)
            r.check("readings after the outage stored",
                    ds.wait_until(lambda: local_count() == total + fed, 30), str(local_count()))
            # Reconnection backs off up to 30 s (the interface), then ships what waited.
            ok, last = ws.wait_for_lag_zero(stagewell, config, 120)
            r.check("after the outage: lag 0 within 120 s", ok, str(last))
            m = metrics(http_port) or {}
            r.check("metrics after the outage: connected 1, lag 0",
                    m.get("stagewell_warehouse_connected") == 1
                    and m.get("stagewell_warehouse_lag_readings") == 0, str(m))
            r.check("the live readings all in the warehouse", in_warehouse() == total + fed,
                    f"{in_warehouse()} of {total + fed}")
            ws.compare_plant(r, "after the outage", db, pg, PLANT, schema=SCHEMA)
            ws.discharge_close(r, "after the outage", db, pg, PLANT, schema=SCHEMA)
            ws.reading_keys_once(r, "after the outage", pg, PLANT, SCHEMA)
            r.check("SIGTERM: exit 0", daemon.stop() == 0, daemon.log()[-1500:])

        # ---- (c) a warehouse that never answers -----------------------------------------------
        silent = SilentServer()
        try:
            hung = (f'warehouse:\n  postgresql: "host=127.0.0.1 port={silent.port} '
                    f'dbname={ws.DATABASE} user={ws.WRITER}"\n'
                    f"  password_file: warehouse.password\n  plant: {PLANT}\n"
                    f"  schema: {SCHEMA}\n")
            ds.write(config, config_text(http_port, hung))
            with ds.Daemon(daemon_program, config, os.path.join(root, "hung.log"), env) as daemon:
                daemon.start()
                r.check("hung warehouse: the service starts", ds.wait_until(
                    lambda: "started" in daemon.log(), 60), daemon.log()[-1500:])
                r.check("hung warehouse: the service holds a connection to it",
                        ds.wait_until(lambda: silent.held, 30) is not None)
                before = local_count()
                feed(5)
                r.check("hung warehouse: readings are still stored locally",
                        ds.wait_until(lambda: local_count() == before + 5, 30),
                        f"{local_count()} of {before + 5}")
                answered = metrics(http_port)
                r.check("hung warehouse: /metrics answers within 5 s, connected 0",
                        answered is not None
                        and answered.get("stagewell_warehouse_connected") == 0, str(answered))
                asked = time.monotonic()
                code, report, text = ws.check_json(stagewell, config)
                took = time.monotonic() - asked
                r.check("hung warehouse: warehouse check gives up within 30 s, exit 1, an error",
                        code == 1 and took < 30 and bool((report or {}).get("error")),
                        f"{took:.1f} s: {text[-600:]}")
                stopping = time.monotonic()
                code = daemon.stop(timeout_s=30)
                took = time.monotonic() - stopping
                r.check("hung warehouse: SIGTERM stops the service within 5 s, exit 0",
                        code == 0 and took < 5, f"exit {code} after {took:.1f} s; "
                        f"{daemon.log()[-1500:]}")
        finally:
            silent.close()
    return r.finish()


if __name__ == "__main__":
    sys.exit(main())
