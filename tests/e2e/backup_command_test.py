#!/usr/bin/env python3
"""`stagewell backup` while the service ingests: the copy passes SQLite's integrity check (run
here by Python's own sqlite3 module, an independent build of SQLite), holds every reading
committed before the backup began, with the same stage, and is one file of its own (rollback
journal: the copy's journal_mode is 'delete', no -wal beside it; SQLite file format, "WAL"
section). A destination that exists is refused and left as it was.
"""
import os
import sqlite3
import subprocess
import tempfile
import threading
import time

import daemon_support as ds

R = ds.Results()
T0 = 1_777_593_600_000  # 2026-05-01T00:00:00Z, ms (Python datetime)
MIN = 60_000
FILES = 400
LINES_PER_FILE = 500

CONFIG = """units: metric
database: db/stagewell.db
sources:
  - type: directory
    path: incoming
sites:
  - id: a
    section: {shape: rectangular, width: 2.0, height: 1.5}
    roughness: 0.014
    slope: 0.001
"""


def feed(folder, stop):
    """Drops files of readings, one every few milliseconds, until all are dropped or `stop`."""
    for f in range(FILES):
        if stop.is_set():
            return
        rows = "".join(f"a,{ds.iso(T0 + (f * LINES_PER_FILE + i) * MIN)},{0.2 + 0.0001 * i}\n"
                       for i in range(LINES_PER_FILE))
        ds.drop_file(folder, f"part-{f:04d}.csv", "site,time,stage\n" + rows)
        time.sleep(0.005)


def rows(db_path, uri_mode="ro"):
    con = sqlite3.connect(f"file:{db_path}?mode={uri_mode}", uri=True, timeout=10)
    try:
        return set(con.execute("SELECT site, unix_time, stage FROM discharge"))
    finally:
        con.close()


def main():
    args = ds.parse_args()
    stagewelld, stagewell = ds.programs(args)
    with tempfile.TemporaryDirectory() as root:
        config = os.path.join(root, "config.yaml")
        ds.write(config, CONFIG)
        incoming = os.path.join(root, "incoming")
        os.makedirs(incoming, exist_ok=True)
        db = os.path.join(root, "db", "stagewell.db")
        copy = os.path.join(root, "backup", "copy.db")
        os.makedirs(os.path.dirname(copy))
        stop = threading.Event()
        feeder = threading.Thread(target=feed, args=(incoming, stop))
        with ds.Daemon(stagewelld, config, os.path.join(root, "daemon.log")) as daemon:
            daemon.start()
            feeder.start()
            try:
                R.check("ingest under way", ds.wait_until(
                    lambda: ds.count(db, "SELECT count(*) FROM readings") > 20 * LINES_PER_FILE,
                    60), daemon.log())
                before = rows(db)  # committed before the backup begins
                run = subprocess.run([stagewell, "backup", "--config", config, copy],
                                     capture_output=True, text=True, timeout=300)
            finally:
                feeder.join()
            R.check("backup exits 0", run.returncode == 0, run.stdout + run.stderr)
            R.check("it reports the integrity check", "passes SQLite's integrity check"
                    in run.stdout, run.stdout)
            total = FILES * LINES_PER_FILE
            R.check("the service goes on to store every reading", ds.wait_until(
                lambda: ds.count(db, "SELECT count(*) FROM readings") == total, 120),
                ds.count(db, "SELECT count(*) FROM readings"))
            R.check("daemon stops cleanly", daemon.stop() == 0)

        con = sqlite3.connect(f"file:{copy}?mode=ro", uri=True)
        try:
            check = con.execute("PRAGMA integrity_check").fetchall()
            mode = con.execute("PRAGMA journal_mode").fetchone()[0]
            version = con.execute("PRAGMA user_version").fetchone()[0]
        finally:
            con.close()
        R.check("the copy passes PRAGMA integrity_check", check == [("ok",)], str(check[:5]))
        R.check("the copy is a rollback-journal file", mode == "delete", mode)
        R.check("no -wal or .part file beside the copy",
                sorted(os.listdir(os.path.dirname(copy))) == ["copy.db"],
                str(os.listdir(os.path.dirname(copy))))
        live = sqlite3.connect(f"file:{db}?mode=ro", uri=True)
        live_version = live.execute("PRAGMA user_version").fetchone()[0]
        live.close()
        R.check("the copy has the live schema version", version == live_version,
                f"{version} vs {live_version}")
        copied = rows(copy)
        missing = before - copied
        R.check("every reading committed before the backup is in the copy, same stage",
                not missing, f"{len(missing)} missing of {len(before)}")
        print(f"figure: {len(before)} readings committed before the backup, "
              f"{len(copied)} in the copy, {FILES * LINES_PER_FILE} in the end", flush=True)

        # A destination that exists: refused, untouched.
        with open(copy, "rb") as f:
            original = f.read()
        again = subprocess.run([stagewell, "backup", "--config", config, copy],
                               capture_output=True, text=True, timeout=60)
        R.check("an existing destination: exit 1", again.returncode == 1, again.stderr)
        R.check("... with a reason", "exists" in again.stderr, again.stderr)
        with open(copy, "rb") as f:
            R.check("... and the file left as it was", f.read() == original)
    return R.finish()


if __name__ == "__main__":
    raise SystemExit(main())
