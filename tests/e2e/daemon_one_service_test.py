#!/usr/bin/env python3
"""One service per database: a second `stagewelld` on a database a first one is running on — here
with another configuration, whose roughness would recompute every stored reading — refuses to
start, exit status 1, naming the database and the running service's process id, and changes
nothing: no recomputation, no new configuration version, every discharge still the first
configuration's. `stagewell ingest` beside the running service still works (back-loading is a
feature). Once the first service has stopped — cleanly, or by kill -9 — the second one starts.

Discharges are compared with Manning's equation in closed form for a rectangular channel
(daemon_support.manning; common practice) at 5e-4 relative (the service reads a rating table
documented as within 0.01 % of the formula); the two roughnesses differ by 40 %.
"""
import os
import re
import subprocess
import tempfile

import daemon_support as ds

R = ds.Results()
T0 = 1714521600_000  # 2024-05-01T00:00:00Z, ms
MIN = 60_000


def config(roughness, folder):
    return f"""\
units: metric
database: db/stagewell.db
sources:
  - type: directory
    path: {folder}
sites:
  - id: a
    section: {{shape: rectangular, width: 2.0, height: 1.5}}
    roughness: {roughness}
    slope: 0.001
"""


def csv(first_minute, count):
    return "site,time,stage\n" + "".join(
        f"a,{ds.iso(T0 + (first_minute + m) * MIN)},{0.4 + 0.001 * m:.3f}\n" for m in range(count))


def worst_error(db, roughness):
    return ds.worst_discharge_error(db, ds.rectangular(2.0, 1.5), roughness, 0.001)


def main():
    args = ds.parse_args()
    daemon_program, stagewell = ds.programs(args)
    with tempfile.TemporaryDirectory(prefix="stagewell-e2e-") as root:
        first_config = os.path.join(root, "first.yaml")
        second_config = os.path.join(root, "second.yaml")
        ds.write(first_config, config(0.014, "incoming-1"))
        ds.write(second_config, config(0.020, "incoming-2"))
        for folder in ("incoming-1", "incoming-2"):
            os.makedirs(os.path.join(root, folder))
        db = os.path.join(root, "db", "stagewell.db")

        with ds.Daemon(daemon_program, first_config, os.path.join(root, "first.log")) as first:
            first.start()
            ds.drop_file(os.path.join(root, "incoming-1"), "a.csv", csv(0, 100))
            R.check("the first service stores its readings", ds.wait_until(
                lambda: ds.count(db, "SELECT count(*) FROM discharge") == 100, 30), first.log())
            versions = ds.count(db, "SELECT count(*) FROM config_versions")

            second_log = os.path.join(root, "second.log")
            with ds.Daemon(daemon_program, second_config, second_log) as second:
                second.start()
                try:
                    code = second.process.wait(timeout=30)
                except subprocess.TimeoutExpired:
                    code = None
                R.check("the second service refuses to start: exit status 1", code == 1,
                        f"exit {code}; {second.log()}")
                said = second.log()
                R.check("... naming the database", os.path.realpath(db) in said
                        or db in said, said)
                R.check("... and the running service's process id",
                        re.search(rf"process {first.process.pid}\b", said) is not None, said)

            R.check("the first service is still running", first.running(), first.log())
            R.check("nothing recomputed", ds.count(
                db, "SELECT count(*) FROM recomputation_runs") == 0)
            R.check("no configuration version recorded by the refused service", ds.count(
                db, "SELECT count(*) FROM config_versions") == versions)
            worst = worst_error(db, 0.014)
            R.check("every discharge is still the first configuration's", worst < 5e-4,
                    f"worst relative error {worst:.2e}")

            # Back-loading beside the running service.
            history = os.path.join(root, "history.csv")
            ds.write(history, csv(1000, 50))
            ingest = subprocess.run([stagewell, "ingest", "--config", first_config, "--quiet",
                                     history], capture_output=True, text=True, timeout=120)
            R.check("stagewell ingest beside the service works", ingest.returncode == 0,
                    ingest.stdout + ingest.stderr)
            R.check("... and stores its readings", ds.count(
                db, "SELECT count(*) FROM discharge") == 150)
            ds.drop_file(os.path.join(root, "incoming-1"), "b.csv", csv(2000, 10))
            R.check("the service goes on storing beside it", ds.wait_until(
                lambda: ds.count(db, "SELECT count(*) FROM discharge") == 160, 30), first.log())
            R.check("the first service stops cleanly", first.stop() == 0, first.log())

        # Stopped cleanly: the second configuration may now run on the database.
        with ds.Daemon(daemon_program, second_config, os.path.join(root, "second-2.log")) as second:
            second.start()
            R.check("after the first stopped, the second service starts and recomputes",
                    ds.wait_until(lambda: worst_error(db, 0.020) < 5e-4, 60), second.log())
            second.kill9()

        # Killed: the kernel freed its lock, so the next start does not wait for anything.
        with ds.Daemon(daemon_program, first_config, os.path.join(root, "first-2.log")) as first:
            first.start()
            R.check("after a kill -9 the next service starts", ds.wait_until(
                lambda: worst_error(db, 0.014) < 5e-4, 60), first.log())
            R.check("and stops cleanly", first.stop() == 0, first.log())
    return R.finish()


if __name__ == "__main__":
    raise SystemExit(main())
