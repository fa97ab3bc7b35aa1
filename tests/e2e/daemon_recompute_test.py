"""The daemon recomputes a year of 1-minute readings after a SIGHUP brings a change of roughness,
while live readings from a followed file keep being stored: each new reading must become visible
while readings of the changed period still carry the old version. Afterwards every recomputed and
every live reading is checked against Manning's equation in closed form (daemon_support.rectangular;
Q = (1/n) A R^(2/3) S^(1/2), SI, common practice), and the `recomputations` view holds one row.

Then a crash (SIGKILL) in the middle of another recomputation: after a restart every reading is
recomputed exactly once across the two runs.

Bounded: the year is ingested once with `stagewell ingest`; every wait polls with a deadline.
"""
import math
import os
import signal
import subprocess
import sys
import tempfile
import time

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import daemon_support as ds  # noqa: E402

WIDTH, HEIGHT, SLOPE = 2.0, 1.5, 0.001  # m, m, m/m
N_BEFORE, N_AFTER, N_CRASH = 0.015, 0.025, 0.020
YEAR_START_MS = 1735689600000  # 2025-01-01T00:00:00Z (Python: datetime(2025,1,1,tzinfo=utc))
MINUTE_MS = 60_000
YEAR_READINGS = 365 * 1440
CHANGE_MS = YEAR_START_MS + 14 * 86_400_000  # 2025-01-15T00:00:00Z
LIVE_START_MS = YEAR_START_MS + YEAR_READINGS * MINUTE_MS  # 2026-01-01T00:00:00Z

CONFIG = f"""units: metric
database: db/flows.db
timezone: UTC
sources:
  - type: tail
    path: logger/live.csv
    site: canal
sites:
  - id: canal
    section: {{shape: rectangular, width: {WIDTH}, height: {HEIGHT}}}
    roughness: {N_BEFORE}
    slope: {SLOPE}
"""
CHANGE = f"""    changes:
      - from: {ds.iso(CHANGE_MS)}
        roughness: {N_AFTER}
"""


def stage(i):
    """Invented stage, m: 0.5 m with a daily swing of 0.2 m, to the millimetre."""
    return round(0.5 + 0.2 * math.sin(2 * math.pi * i / 1440), 3)


def manning(depth, n):
    geometry, _ = ds.rectangular(WIDTH, HEIGHT)
    area, perimeter, _ = geometry(depth)
    return area * (area / perimeter) ** (2 / 3) * math.sqrt(SLOPE) / n


def main():
    args = ds.parse_args()
    daemon_program, stagewell = ds.programs(args)
    r = ds.Results()
    with tempfile.TemporaryDirectory(prefix="stagewell-e2e-") as root:
        config = os.path.join(root, "flows.yaml")
        ds.write(config, CONFIG)
        db = os.path.join(root, "db", "flows.db")
        live = os.path.join(root, "logger", "live.csv")
        ds.write(live, "time,stage\n")
        year = os.path.join(root, "year.csv")
        with open(year, "w") as f:
            f.write("site,time,stage\n")
            for i in range(YEAR_READINGS):
                f.write(f"canal,{ds.iso(YEAR_START_MS + i * MINUTE_MS)},{stage(i)}\n")
        done = subprocess.run([stagewell, "ingest", "--config", config, "--quiet", year],
                              capture_output=True, text=True, timeout=600)
        r.check("a year ingested", done.returncode == 0, done.stderr)
        old_id = ds.query(db, "SELECT config_id FROM config_versions")[0][0]

        with ds.Daemon(daemon_program, config, os.path.join(root, "daemon.log")) as daemon:
            daemon.start()
            r.check("started", ds.wait_until(lambda: "started" in daemon.log(), 60), daemon.log())
            ds.write(config, CONFIG + CHANGE)
            hup_at = time.monotonic()
            daemon.signal(signal.SIGHUP)
            r.check("recomputation planned",
                    ds.wait_until(lambda: "recomputing" in daemon.log(), 60), daemon.log())

            # Feed live readings one at a time; each must be stored while old readings remain.
            visible_during = 0
            fed = 0
            while fed < 20:
                t = LIVE_START_MS + fed * MINUTE_MS
                ds.append(live, f"{ds.iso(t)},{stage(YEAR_READINGS + fed)}\n")
                fed += 1
                seen = ds.wait_until(lambda: ds.query(
                    db, "SELECT (SELECT count(*) FROM readings WHERE time_ms = ?), "
                        "(SELECT count(*) FROM readings WHERE config_id = ? AND time_ms >= ?)",
                    (t, old_id, CHANGE_MS))[0] if ds.query(
                        db, "SELECT 1 FROM readings WHERE time_ms = ?", (t,)) else None, 30)
                r.check(f"live reading {fed} stored", seen is not None)
                if seen is None or seen[1] == 0:
                    break  # the recomputation has finished: nothing more to show
                visible_during += 1
            r.check("live readings stored while the recomputation ran", visible_during >= 1,
                    f"{visible_during} of {fed}")

            finished = ds.wait_until(lambda: "recomputed" in daemon.log(), 600, 0.1)
            elapsed = time.monotonic() - hup_at
            r.check("recomputation finished", finished, daemon.log()[-2000:])
            print(f"recomputed {YEAR_READINGS - 14 * 1440} readings in {elapsed:.1f} s "
                  f"(SIGHUP to the last step), {visible_during} live readings stored meanwhile",
                  flush=True)
            r.check("daemon stops cleanly", daemon.stop() == 0)

        # Every reading against the closed form, with the n in force at its time.
        worst = 0.0
        rows = ds.query(db, "SELECT time_ms, stage, discharge FROM readings ORDER BY time_ms")
        for t, s, q in rows:
            want = manning(s, N_AFTER if t >= CHANGE_MS else N_BEFORE)
            worst = max(worst, abs(q - want) / want)
        r.check("every reading matches Manning's equation with its n", worst < 1e-5,
                f"worst relative error {worst:.2e}")
        r.check("no reading left with the old version after the change", ds.count(
            db, "SELECT count(*) FROM readings WHERE config_id = ? AND time_ms >= ?",
            (old_id, CHANGE_MS)) == 0)
        changes = ds.query(db, "SELECT readings_changed, period_from FROM recomputations")
        r.check("one row in recomputations", len(changes) == 1, str(changes))
        if changes:
            r.check("readings_changed: the year after the change",
                    changes[0][0] == YEAR_READINGS - 14 * 1440, str(changes[0]))
            r.check("period_from: the change", changes[0][1] == ds.iso(CHANGE_MS), changes[0][1])

        # A crash in the middle of a recomputation loses nothing and does nothing twice: another
        # n, start, SIGKILL once a step is committed, start again; the rest is found and done.
        mid_id = ds.query(db, "SELECT config_id FROM readings WHERE time_ms = ?",
                          (CHANGE_MS,))[0][0]
        ds.write(config, CONFIG + CHANGE.replace(f"roughness: {N_AFTER}",
                                                 f"roughness: {N_CRASH}"))
        log = os.path.join(root, "daemon2.log")
        with ds.Daemon(daemon_program, config, log) as daemon:
            daemon.start()
            r.check("a step committed before the crash", ds.wait_until(
                lambda: ds.count(db, "SELECT count(*) FROM recomputations") == 2, 120), daemon.log())
            daemon.kill9()
        with ds.Daemon(daemon_program, config, log) as daemon:
            daemon.start()
            r.check("the rest done after the restart", ds.wait_until(lambda: ds.count(
                db, "SELECT count(*) FROM readings WHERE config_id = ? AND time_ms >= ?",
                (mid_id, CHANGE_MS)) == 0, 600, 0.1), daemon.log()[-2000:])
            r.check("daemon stops cleanly after the crash", daemon.stop() == 0)
        worst = 0.0
        for t, s, q in ds.query(db, "SELECT time_ms, stage, discharge FROM readings"):
            want = manning(s, N_CRASH if t >= CHANGE_MS else N_BEFORE)
            worst = max(worst, abs(q - want) / want)
        r.check("after the crash every reading matches Manning's equation with its n",
                worst < 1e-5, f"worst relative error {worst:.2e}")
        rows = ds.query(db, "SELECT readings_changed, finished FROM recomputations "
                           "ORDER BY at LIMIT -1 OFFSET 1")
        want_changed = YEAR_READINGS - 14 * 1440 + fed
        print(f"the run killed and the run after it, recorded: {rows}", flush=True)
        # One recomputation, however often it was stopped: the run after the crash carries on the
        # killed run's row, and marks it finished.
        r.check("across the crash: one row, each reading recomputed once",
                len(rows) == 1 and rows[0][0] == want_changed, f"{rows} vs {want_changed}")
        r.check("the row carried on is marked finished", len(rows) == 1 and rows[0][1] is not None,
                str(rows))
    return r.finish()


if __name__ == "__main__":
    sys.exit(main())
