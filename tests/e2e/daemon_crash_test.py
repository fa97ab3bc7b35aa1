#!/usr/bin/env python3
"""kill -9 of `stagewelld` while it ingests a large dropped file, again and again: after the last
restart every reading is stored exactly once, with its stage, and nothing is a conflict.

The store commits each batch's readings together with how far the file has been read
(docs/database.md, "Schema and migrations"), so a crash at any instant neither loses nor repeats a
line. The kills land at different moments — before the first commit, and at several points of the
file, a little after a commit became visible (by a random few milliseconds) — and one while the file
has been read to its end but perhaps not yet moved to done/. The expected readings are the lines
this script wrote.
"""
import os
import random
import tempfile
import time

import daemon_support as ds

R = ds.Results()
T0 = 1704067200_000  # 2024-01-01T00:00:00Z, ms
MIN = 60_000
LINES = 240_000
SITES = ["north", "south", "east"]

CONFIG = """\
units: metric
database: db/stagewell.db
sources:
  - type: directory
    path: incoming
sites:
""" + "".join(f"""  - id: {site}
    section: {{shape: rectangular, width: 2.0, height: 1.5}}
    roughness: 0.014
    slope: 0.001
""" for site in SITES)


def reading(i):
    """The i-th line: (site, time ms, stage text). Sites interleave, one reading a minute each."""
    site = SITES[i % len(SITES)]
    time_ms = T0 + (i // len(SITES)) * MIN
    stage = f"{0.2 + ((i * 7919) % 1000) / 1000.0:.3f}"  # wanders; never the same for long
    return site, time_ms, stage


def main():
    args = ds.parse_args()
    daemon_program, _ = ds.programs(args)
    rng = random.Random(7)  # fixed seed: the same kill moments in every run
    with tempfile.TemporaryDirectory(prefix="stagewell-e2e-") as root:
        config = os.path.join(root, "stagewell.yaml")
        ds.write(config, CONFIG)
        incoming = os.path.join(root, "incoming")
        os.makedirs(incoming)
        db = os.path.join(root, "db", "stagewell.db")
        text = "site,time,stage\n" + "".join(
            f"{s},{ds.iso(t)},{v}\n" for s, t, v in map(reading, range(LINES)))
        done_path = os.path.join(incoming, "done", "history.csv")

        def stored():
            return ds.count(db, "SELECT count(*) FROM discharge")

        daemon = ds.Daemon(daemon_program, config, os.path.join(root, "daemon.log"))
        try:
            daemon.start()
            # Wait until the daemon has created its database, so the first kill is mid-work.
            R.check("database created", ds.wait_until(lambda: os.path.exists(db), 10))
            ds.drop_file(incoming, "history.csv", text)

            # Kill 1: as soon as the daemon says it is reading the file, before a commit.
            R.check("the daemon starts reading the file", ds.wait_until(
                lambda: "history.csv: reading" in daemon.log(), 10, interval_s=0.002))
            before = stored()
            daemon.kill9()
            kills_mid_file = 1 if before < LINES else 0
            daemon.start()
            for fraction in [0.15, 0.4, 0.65, 0.9]:
                threshold = int(fraction * LINES)
                ds.wait_until(lambda: stored() > threshold or os.path.exists(done_path), 30,
                              interval_s=0.005)
                time.sleep(rng.uniform(0.0, 0.03))  # somewhere between two commits
                before = stored()
                daemon.kill9()
                after = stored()
                if after < LINES and not os.path.exists(done_path):
                    kills_mid_file += 1
                R.check(f"kill -9 at {fraction:.0%}: nothing committed is lost by the kill",
                        after >= before, f"{before} -> {after}")
                daemon.start()
            print(f"{kills_mid_file} kills landed in the middle of the file", flush=True)
            R.check("at least 3 kills landed in the middle of the file", kills_mid_file >= 3,
                    f"{kills_mid_file} (the machine may be too fast for this file size)")

            # Kill once more right after the last line is stored: perhaps before the move.
            ds.wait_until(lambda: stored() >= LINES, 60, interval_s=0.005)
            daemon.kill9()
            daemon.start()
            R.check("file moved to done/ in the end",
                    ds.wait_until(lambda: os.path.exists(done_path), 60), daemon.log())

            have = ds.stages(db)
            R.check("count == lines", len(have) == LINES, f"{len(have)} rows for {LINES} lines")
            wrong = [(s, t, v) for s, t, v in map(reading, range(LINES))
                     if have.get((s, t)) != float(v)]
            R.check("every (site, time) present with its stage", not wrong, f"{wrong[:5]}")
            kept = ds.rejects(db)
            R.check("no conflicts in rejects", not any(r[3].startswith("conflict") for r in kept))
            R.check("no rejects at all", not kept, f"{kept[:3]}")
            R.check("the daemon is running after the restarts", daemon.running(), daemon.log())
            R.check("SIGTERM: exit 0", daemon.stop() == 0, daemon.log())
        finally:
            daemon.kill9()
    ds.exit_with(R)


if __name__ == "__main__":
    main()
