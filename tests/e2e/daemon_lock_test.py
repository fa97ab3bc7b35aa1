#!/usr/bin/env python3
"""The service while another process holds the database's write lock (an analyst's shell left in
`BEGIN EXCLUSIVE`, a backup tool): the status page and /api/sites still answer, tcp connections
stay open and their acknowledgements wait for the commit, nothing acknowledged is lost, and the
log says once that it waits and once that it works again. A stop during such a lock ends the
service (exit 0) without waiting for the lock, losing nothing acknowledged; a dropped file that
could not be committed is read again at the next start, every line stored once. A second SIGTERM
ends it at once.

How long each answer takes is measured by tests/bench/service_bench.py, not here: this script
checks what happens (answered, kept open, not lost, stopped). Discharges are compared with
Manning's equation in closed form for a rectangular channel (daemon_support.manning; common
practice) at 5e-4 relative (the service reads a rating table documented as within 0.01 % of it).
"""
import http.client
import json
import os
import signal
import sqlite3
import tempfile
import time

import daemon_support as ds
import tcp_support as t

R = ds.Results()
T0 = 1714521600_000  # 2024-05-01T00:00:00Z, ms
MIN = 60_000
LOCK_S = 4  # long enough for the "waiting" line (logged after a second of waiting)


def config(tcp_port, http_port):
    return f"""\
units: metric
database: db/stagewell.db
sources:
  - type: directory
    path: incoming
  - type: tcp
    listen: 127.0.0.1:{tcp_port}
http:
  listen: 127.0.0.1:{http_port}
sites:
  - id: a
    section: {{shape: rectangular, width: 2.0, height: 1.5}}
    roughness: 0.014
    slope: 0.001
"""


def line(minute):
    return f"a,{ds.iso(T0 + minute * MIN)},{0.4 + 0.001 * (minute % 500):.3f}"


def get(port, path):
    """(status, body) of one GET, or (None, reason) when it fails within 10 s."""
    try:
        connection = http.client.HTTPConnection("127.0.0.1", port, timeout=10)
        connection.request("GET", path)
        response = connection.getresponse()
        body = response.read()
        connection.close()
        return response.status, body
    except OSError as e:
        return None, str(e)


class Lock:
    """Another process's write lock on the database: BEGIN EXCLUSIVE on a connection of ours."""

    def __init__(self, db):
        self.connection = sqlite3.connect(db, timeout=30, isolation_level=None)
        self.connection.execute("BEGIN EXCLUSIVE")

    def release(self):
        self.connection.execute("ROLLBACK")
        self.connection.close()


def stored_minutes(db):
    return {round((u * 1000 - T0) / MIN) for (u,) in ds.query(db, "SELECT unix_time FROM discharge")}


def main():
    args = ds.parse_args()
    daemon_program, _ = ds.programs(args)
    with tempfile.TemporaryDirectory(prefix="stagewell-e2e-") as root:
        tcp_port, http_port = t.free_port(), t.free_port()
        config_path = os.path.join(root, "stagewell.yaml")
        ds.write(config_path, config(tcp_port, http_port))
        incoming = os.path.join(root, "incoming")
        os.makedirs(incoming)
        db = os.path.join(root, "db", "stagewell.db")

        with ds.Daemon(daemon_program, config_path, os.path.join(root, "1.log")) as daemon:
            daemon.start()
            R.check("started", ds.wait_until(lambda: "started:" in daemon.log(), 30), daemon.log())
            client = t.Client(tcp_port)
            client.send_lines([line(m) for m in range(10)])
            R.check("before the lock: lines acknowledged", client.wait_ok(10) == 10)

            lock = Lock(db)
            locked_at = time.monotonic()
            client.send_lines([line(m) for m in range(10, 20)])
            ds.drop_file(incoming, "during.csv", "site,time,stage\n"
                         + "".join(line(m) + "\n" for m in range(100, 150)))
            answers = []
            while time.monotonic() - locked_at < LOCK_S:
                answers.append(get(http_port, "/api/sites")[0])
                answers.append(get(http_port, "/")[0])
                time.sleep(0.2)
            R.check("while locked: every /api/sites and / request answered 200",
                    answers and all(a == 200 for a in answers), str(answers))
            status, body = get(http_port, "/api/sites")
            sites = json.loads(body)["sites"] if status == 200 else []
            R.check("while locked: /api/sites shows what was committed",
                    sites and sites[0]["latest"]["time"] == ds.iso(T0 + 9 * MIN), str(sites))
            R.check("while locked: no acknowledgement for the lines sent meanwhile",
                    client.wait_ok(20, timeout=0.5) == 0, str(client.replies))
            R.check("while locked: the connection stays open", not client.closed)
            R.check("while locked: the waiting is logged", "waiting for it" in daemon.log(),
                    daemon.log()[-1500:])
            lock.release()

            R.check("after the lock: the lines sent meanwhile acknowledged",
                    client.wait_ok(20, timeout=20) == 20, str(client.replies))
            R.check("after the lock: the dropped file stored", ds.wait_until(
                lambda: set(range(100, 150)) <= stored_minutes(db), 20), daemon.log()[-1500:])
            R.check("after the lock: working again is logged", ds.wait_until(
                lambda: "working again" in daemon.log(), 10), daemon.log()[-1500:])
            log = daemon.log()
            R.check("the waiting is logged once, and the end of it once",
                    log.count("waiting for it") == 1 and log.count("database: working again") == 1,
                    log[-2000:])
            client.close()

            # A stop while another process holds the lock.
            lock = Lock(db)
            client = t.Client(tcp_port)
            client.send_lines([line(m) for m in range(200, 210)])
            ds.drop_file(incoming, "stop.csv", "site,time,stage\n"
                         + "".join(line(m) + "\n" for m in range(300, 400)))
            time.sleep(0.5)  # taken by the writer, which now waits for the lock
            stop_at = time.monotonic()
            code = daemon.stop(timeout_s=30)
            elapsed = time.monotonic() - stop_at
            print(f"stopped {elapsed:.2f} s after SIGTERM with the database locked", flush=True)
            R.check("a stop under the lock ends the service: exit 0", code == 0,
                    f"exit {code}; {daemon.log()[-1500:]}")
            replies = []
            while (reply := client.read_reply(timeout=5)) is not None:
                replies.append(reply)
            R.check("the tcp client is told that the service stops",
                    any(r.startswith("closing") for r in replies) and not any(
                        r.startswith("ok ") for r in replies), str(replies))
            lock.release()
        acknowledged = set(range(20)) | set(range(100, 150))
        R.check("nothing acknowledged is lost", acknowledged <= stored_minutes(db))
        R.check("nothing unacknowledged was committed under the lock",
                not (set(range(200, 210)) | set(range(300, 400))) & stored_minutes(db))

        # The next start reads the file again from the last commit: every line once.
        with ds.Daemon(daemon_program, config_path, os.path.join(root, "2.log")) as daemon:
            daemon.start()
            R.check("after the restart the file is stored", ds.wait_until(
                lambda: set(range(300, 400)) <= stored_minutes(db), 30), daemon.log())
            R.check("every reading stored once", ds.count(
                db, "SELECT count(*) FROM discharge") == len(acknowledged) + 100)
            worst = ds.worst_discharge_error(db, ds.rectangular(2.0, 1.5), 0.014, 0.001)
            R.check("every discharge is Manning's", worst < 5e-4, f"worst {worst:.2e}")

            # A second SIGTERM ends it at once, lock or not.
            lock = Lock(db)
            client = t.Client(tcp_port)
            client.send_lines([line(m) for m in range(500, 505)])
            time.sleep(0.3)
            daemon.signal(signal.SIGTERM)
            time.sleep(0.05)
            daemon.signal(signal.SIGTERM)
            try:
                code = daemon.process.wait(timeout=10)
            except Exception:
                code = None
            R.check("a second SIGTERM ends the service by the signal",
                    code == -signal.SIGTERM, f"exit {code}")
            client.close()
            lock.release()
        R.check("and loses nothing acknowledged", acknowledged <= stored_minutes(db))
    return R.finish()


if __name__ == "__main__":
    raise SystemExit(main())
