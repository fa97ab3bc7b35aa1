#!/usr/bin/env python3
"""A full disk: one error line when writing fails, retries at growing intervals, one line when
it works again, the state in the metrics, and nothing lost.

The database lives on a small tmpfs (mounted here; the test is skipped, exit 77, where mounting
is not permitted). A file of readings larger than the space left is dropped: the batch fails,
the service retries (after 1, 2, 4, then at most 8 s), and the log holds one error line for all
of it. Then the tmpfs is made larger (remount), the next retry succeeds: one "works again" line,
every reading stored once, the file moved to done/.
"""
import os
import subprocess
import tempfile

import daemon_support as ds
import http_support as h

R = ds.Results()
T0 = 1714521600_000  # 2024-05-01T00:00:00Z, ms
MIN = 60_000
READINGS = 30_000  # about 1 MB of database: far more than the 448 KiB file system holds


def config(http_port, dbfs):
    return f"""\
units: metric
database: {dbfs}/stagewell.db
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


def csv(count):
    rows = [f"a,{ds.iso(T0 + m * MIN)},{0.4 + 0.001 * (m % 500):.3f}" for m in range(count)]
    return "site,time,stage\n" + "\n".join(rows) + "\n"


def metric(port, name):
    status, _, body = h.get(port, "/metrics")
    for line in body.decode().splitlines():
        if line.startswith(name + " "):
            return float(line.split()[1])
    return None


def main():
    args = ds.parse_args()
    daemon_program, _ = ds.programs(args)
    with tempfile.TemporaryDirectory(prefix="stagewell-e2e-") as root:
        with ds.tmpfs(os.path.join(root, "dbfs"), "size=448k") as dbfs:
            run(daemon_program, root, dbfs)
    ds.exit_with(R)


def run(daemon_program, root, dbfs):
    http_port = h.free_port()
    config_path = os.path.join(root, "stagewell.yaml")
    ds.write(config_path, config(http_port, dbfs))
    incoming = os.path.join(root, "incoming")
    os.makedirs(incoming)
    db = os.path.join(dbfs, "stagewell.db")
    daemon = ds.Daemon(daemon_program, config_path, os.path.join(root, "daemon.log")).start()
    try:
        R.check("the service starts on the small file system", h.wait_for_port(http_port),
                daemon.log()[-2000:])
        ds.drop_file(incoming, "big.csv", csv(READINGS))
        R.check("the disk fills: the failure is logged",
                ds.wait_until(lambda: "store: " in daemon.log() and "full" in daemon.log(), 30),
                daemon.log()[-2000:])
        # Retries after 1, 2 and 4 s fall in the next 8 s; none of them may log an error again.
        ds.wait_until(lambda: False, 8)
        errors = [l for l in daemon.log().splitlines() if " error " in l and "store: " in l]
        R.check("one error line for the whole time the disk is full, retries included",
                len(errors) == 1, "\n".join(errors))
        R.check("the line says how it retries", errors and "growing intervals" in errors[0],
                "\n".join(errors))
        R.check("metrics: stagewell_store_failing 1",
                metric(http_port, "stagewell_store_failing") == 1.0)
        R.check("nothing of the file is stored yet, and it is still in the folder",
                not os.path.exists(os.path.join(incoming, "done", "big.csv")))

        subprocess.run(["mount", "-o", "remount,size=64m", dbfs], check=True)
        R.check("room again: the next retry stores the file",
                ds.wait_until(lambda: os.path.exists(os.path.join(incoming, "done", "big.csv")),
                              30), daemon.log()[-2000:])
        again = [l for l in daemon.log().splitlines() if "store: writing works again" in l]
        R.check("one line says writing works again", len(again) == 1, "\n".join(again))
        R.check("metrics: stagewell_store_failing 0",
                metric(http_port, "stagewell_store_failing") == 0.0)
    finally:
        R.check("a clean stop", daemon.stop() == 0, daemon.log()[-2000:])
    R.check("every reading stored once",
            ds.count(db, "SELECT count(*) FROM readings") == READINGS and
            ds.count(db, "SELECT count(DISTINCT time_ms) FROM readings") == READINGS)


if __name__ == "__main__":
    main()
