#!/usr/bin/env python3
"""The status page and the API answer while the service ingests a large file: requests made
during a drop-folder ingest of 600,000 readings are all answered, at different points of the
ingest (each /api/sites answer shows a later latest reading than the one before, none the file's
last), and month-long readings answers come back whole meanwhile; when the file is done every
reading is stored once and the API agrees with the database.

How fast the answers come is measured by tests/bench/service_bench.py, not here. The expected
numbers come from the file this script writes, read back through the `discharge` view with
Python's sqlite3.
"""
import http.client
import json
import os
import tempfile
import threading

import daemon_support as ds
import tcp_support as t

R = ds.Results()
T0 = 1735689600_000  # 2025-01-01T00:00:00Z, ms
MIN = 60_000
SITES = ("north", "south", "east")
MINUTES = 200_000  # per site: 600,000 readings in all


def config(http_port):
    text = f"""units: metric
database: db/stagewell.db
sources:
  - type: directory
    path: incoming
http:
  listen: 127.0.0.1:{http_port}
sites:
"""
    for site in SITES:
        text += f"""  - id: {site}
    section: {{shape: rectangular, width: 2.0, height: 2.0}}
    roughness: 0.014
    slope: 0.001
    checks: {{flatline: 0}}
"""
    return text


def get(port, path):
    connection = http.client.HTTPConnection("127.0.0.1", port, timeout=30)
    try:
        connection.request("GET", path)
        response = connection.getresponse()
        return response.status, response.read()
    finally:
        connection.close()


def main():
    args = ds.parse_args()
    daemon_program, _ = ds.programs(args)
    with tempfile.TemporaryDirectory(prefix="stagewell-e2e-") as root:
        http_port = t.free_port()
        config_path = os.path.join(root, "stagewell.yaml")
        ds.write(config_path, config(http_port))
        incoming = os.path.join(root, "incoming")
        os.makedirs(incoming)
        db = os.path.join(root, "db", "stagewell.db")
        # Time order across sites, so every site's latest reading moves all along the file.
        lines = ["site,time,stage\n"]
        for m in range(MINUTES):
            for i, site in enumerate(SITES):
                lines.append(f"{site},{ds.iso(T0 + m * MIN)},{0.5 + 0.1 * i + (m % 97) / 1000:.3f}\n")
        text = "".join(lines)

        with ds.Daemon(daemon_program, config_path, os.path.join(root, "d.log")) as daemon:
            daemon.start()
            R.check("started", ds.wait_until(lambda: "started:" in daemon.log(), 30), daemon.log())
            month = (f"/api/sites/north/readings?from={ds.iso(T0)}"
                     f"&to={ds.iso(T0 + 31 * 86_400_000)}")
            month_answers = []
            stop = threading.Event()

            def ask_for_months():
                while not stop.is_set():
                    status, body = get(http_port, month)
                    month_answers.append((status, len(json.loads(body)["readings"])
                                          if status == 200 else None))

            asker = threading.Thread(target=ask_for_months, daemon=True)
            asker.start()
            ds.drop_file(incoming, "big.csv", text)
            latest = []  # north's latest reading time, as each answer gave it
            statuses = []
            while not os.path.exists(os.path.join(incoming, "done", "big.csv")):
                status, body = get(http_port, "/api/sites")
                statuses.append(status)
                if status != 200:
                    break
                sites = json.loads(body)["sites"]
                if sites[0]["latest"] is not None:
                    latest.append(sites[0]["latest"]["time"])
                if len(latest) > 10_000:
                    break
            stop.set()
            asker.join(timeout=60)
            R.check("every /api/sites request during the ingest answered 200",
                    statuses and all(status == 200 for status in statuses), str(statuses[-5:]))
            last = ds.iso(T0 + (MINUTES - 1) * MIN)
            during = [x for x in latest if x != last]
            R.check("answers came at several points of the ingest",
                    len(set(during)) >= 3, f"{len(set(during))} distinct: {sorted(set(during))[:5]}")
            R.check("each answer shows a reading at least as late as the one before",
                    all(a <= b for a, b in zip(latest, latest[1:])))
            R.check("month-long answers came back meanwhile, all answered",
                    month_answers and all(status == 200 for status, _ in month_answers),
                    str(month_answers[:5]))
            R.check("the stored month is answered whole (20,000 readings, the cap)",
                    any(n == 20_000 for _, n in month_answers), str(month_answers[-5:]))

            R.check("every reading stored once", ds.wait_until(
                lambda: ds.count(db, "SELECT count(*) FROM discharge") == MINUTES * len(SITES), 60))
            status, body = get(http_port, "/api/sites")
            sites = {s["id"]: s for s in json.loads(body)["sites"]} if status == 200 else {}
            for site in SITES:
                row = ds.query(db, "SELECT time, stage, discharge FROM discharge WHERE site = ? "
                                   "ORDER BY unix_time DESC LIMIT 1", (site,))[0]
                got = sites.get(site, {}).get("latest") or {}
                R.check(f"{site}: the API's latest reading is the database's",
                        (got.get("time"), got.get("stage"), got.get("discharge")) == row,
                        f"{got} vs {row}")
            R.check("stops cleanly", daemon.stop() == 0)
    return R.finish()


if __name__ == "__main__":
    raise SystemExit(main())
