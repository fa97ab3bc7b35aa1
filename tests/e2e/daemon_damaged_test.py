#!/usr/bin/env python3
"""A damaged database file: noticed, said once with what to do, and not restarted in a loop.

The file is damaged the way a failing disk or a copy taken mid-write damages it: pages in the
middle overwritten with other bytes (the readings' pages), or its first page (the header). Then:

- `stagewell check --database` runs SQLite's integrity check, lists what it finds and exits 1;
  on a sound file it says so and exits 0;
- the running service answers 500 for what it cannot read and logs the damage once, however many
  requests meet it, naming the file and what to do (restore a backup);
- a start on a file SQLite cannot read at all exits with status 3 (the systemd unit's
  RestartPreventExitStatus), with the same advice.

Whether a file is damaged is SQLite's verdict (PRAGMA integrity_check, SQLITE_CORRUPT,
SQLITE_NOTADB); the test only makes sure it is, before relying on it.
"""
import os
import sqlite3
import subprocess
import tempfile

import daemon_support as ds
import http_support as h

R = ds.Results()
T0 = 1714521600_000  # 2024-05-01T00:00:00Z, ms
MIN = 60_000
READINGS = 6000  # about 50 pages of readings: the middle of the file is theirs


def config(http_port):
    return f"""\
units: metric
database: db/stagewell.db
sources:
  - type: directory
    path: incoming
http:
  listen: 127.0.0.1:{http_port}
sites:
  - id: a
    section: {{shape: rectangular, width: 2.0, height: 1.5}}
    roughness: 0.014
    slope: 0.001
"""


def csv(first_minute, count):
    rows = [f"a,{ds.iso(T0 + m * MIN)},{0.4 + 0.001 * (m % 500):.3f}"
            for m in range(first_minute, first_minute + count)]
    return "site,time,stage\n" + "\n".join(rows) + "\n"


def check_database(cli, config_path):
    return subprocess.run([cli, "check", "--config", config_path, "--database"],
                          capture_output=True, text=True, timeout=60)


def overwrite(path, offset, length):
    with open(path, "r+b") as f:
        f.seek(offset)
        f.write(bytes((0x5A + i * 7) % 256 for i in range(length)))


def main():
    args = ds.parse_args()
    daemon_program, cli = ds.programs(args)
    with tempfile.TemporaryDirectory(prefix="stagewell-e2e-") as root:
        http_port = h.free_port()
        config_path = os.path.join(root, "stagewell.yaml")
        ds.write(config_path, config(http_port))
        incoming = os.path.join(root, "incoming")
        os.makedirs(incoming)
        os.makedirs(os.path.join(root, "db"))
        db = os.path.join(root, "db", "stagewell.db")
        log_path = os.path.join(root, "daemon.log")

        # A sound database first.
        daemon = ds.Daemon(daemon_program, config_path, log_path).start()
        try:
            ds.drop_file(incoming, "year.csv", csv(0, READINGS))
            R.check("the readings are stored", ds.wait_until(
                lambda: os.path.exists(os.path.join(incoming, "done", "year.csv")), 30),
                daemon.log()[-2000:])
        finally:
            R.check("a clean stop (the log folded into the file)", daemon.stop() == 0)
        R.check("all readings stored", ds.count(db, "SELECT count(*) FROM readings") == READINGS)
        sound = check_database(cli, config_path)
        R.check("check --database on a sound file: exit 0, says sound",
                sound.returncode == 0 and "sound" in sound.stdout, sound.stdout + sound.stderr)

        # Damage the pages holding the oldest readings (the service is stopped: no -wal file).
        # The newest ones stay sound: a start reads those (the checks' and alarms' context), and
        # the damage is then met only by a request for the whole range, while running.
        with sqlite3.connect(f"file:{db}?mode=ro", uri=True) as con:
            page = con.execute("PRAGMA page_size").fetchone()[0]
            leaves = [row[0] for row in con.execute(
                "SELECT pageno FROM dbstat WHERE name = 'readings' AND pagetype = 'leaf' "
                "ORDER BY path")]
        R.check("the readings span many pages", len(leaves) >= 20, f"{len(leaves)} leaves")
        for pageno in leaves[2:6]:
            overwrite(db, (pageno - 1) * page, page)
        with sqlite3.connect(f"file:{db}?mode=ro", uri=True) as con:
            try:
                verdict = con.execute("PRAGMA integrity_check").fetchall()
            except sqlite3.DatabaseError as e:
                verdict = [(str(e),)]
        R.check("SQLite finds the file damaged (the premise)", verdict != [("ok",)], f"{verdict}")
        damaged = check_database(cli, config_path)
        R.check("check --database on the damaged file: exit 1",
                damaged.returncode == 1, damaged.stdout + damaged.stderr)
        R.check("check --database says what SQLite found and what to do",
                ("problem(s) found" in damaged.stdout or "cannot be read" in damaged.stdout)
                and "restore" in (damaged.stdout + damaged.stderr), damaged.stdout[-2000:])

        # The service on it: answers 500 where it cannot read, logs the damage once.
        os.remove(log_path)
        daemon = ds.Daemon(daemon_program, config_path, log_path)
        try:
            daemon.start()
            R.check("the service starts (its schema pages are sound)",
                    h.wait_for_port(http_port), daemon.log()[-2000:])
            path = (f"/api/sites/a/readings?from={ds.iso(T0)}"
                    f"&to={ds.iso(T0 + READINGS * MIN)}")
            statuses = [h.get(http_port, path)[0] for _ in range(5)]
            R.check("reading the damaged pages: 500 each time", statuses == [500] * 5,
                    f"{statuses}")
            ds.drop_file(incoming, "more.csv", csv(READINGS, 100))
            ds.wait_until(lambda: daemon.log().count("is damaged") >= 2, 5)
            lines = [line for line in daemon.log().splitlines() if "is damaged" in line]
            R.check("the damage is logged, naming the file and what to do",
                    lines and db in lines[0] and "restore the latest backup" in lines[0],
                    "\n".join(lines))
            R.check("at most once by the readers and once by the writer, not at every retry",
                    1 <= len(lines) <= 2, "\n".join(lines))
        finally:
            daemon.stop()

        # A file SQLite cannot read at all: the start is refused with status 3.
        overwrite(db, 0, 100)  # the header: "SQLite format 3" and the page size
        os.remove(log_path)
        daemon = ds.Daemon(daemon_program, config_path, log_path)
        daemon.start()
        exited = ds.wait_until(lambda: not daemon.running(), 20)
        code = daemon.process.wait(timeout=5) if exited else None
        R.check("a start on an unreadable file exits with status 3 (no restart loop)",
                code == 3, f"exit {code}\n{daemon.log()[-2000:]}")
        R.check("and says the file is damaged and what to do",
                "is damaged" in daemon.log() and "restore" in daemon.log(), daemon.log()[-2000:])
        if not exited:
            daemon.stop()
    ds.exit_with(R)


if __name__ == "__main__":
    main()
