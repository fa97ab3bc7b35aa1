#!/usr/bin/env python3
"""`stagewelld` following a file a logger appends to: new lines appear within about a second, a
partly written line waits for its end, a too-long line cut by a kill -9 is kept once, a restart
resumes without repeats or losses, and truncation, rewriting and rotation (while running and while
stopped) lose nothing.

What is asserted is the contract in docs/input.md ("Sources"): every complete line of every file
that was at the tailed path is stored exactly once, with its stage as written. The expected readings
are the lines this script wrote; nothing is computed by the program under test.
"""
import os
import signal
import tempfile
import time

import daemon_support as ds

R = ds.Results()
T0 = 1714521600_000  # 2024-05-01T00:00:00Z, ms
MIN = 60_000

CONFIG = """\
units: metric
database: db/stagewell.db
sources:
  - type: tail
    path: logger/stage.csv
    site: raceway
sites:
  - id: raceway
    section: {shape: rectangular, width: 2.0, height: 1.0}
    roughness: 0.014
    slope: 0.001
"""
HEADER = "time,stage\n"


def stage(i):
    return f"{0.3 + (i % 97) * 0.001:.3f}"


def line(i):
    return f"{ds.iso(T0 + i * MIN)},{stage(i)}\n"


def lines(indexes):
    return "".join(line(i) for i in indexes)


def main():
    args = ds.parse_args()
    daemon_program, _ = ds.programs(args)
    with tempfile.TemporaryDirectory(prefix="stagewell-e2e-") as root:
        config = os.path.join(root, "stagewell.yaml")
        ds.write(config, CONFIG)
        db = os.path.join(root, "db", "stagewell.db")
        path = os.path.join(root, "logger", "stage.csv")
        log = os.path.join(root, "daemon.log")
        expected = set()

        def stored_all(indexes):
            have = ds.readings(db)
            return all(("raceway", T0 + i * MIN) in have for i in indexes)

        def wait_for(indexes, label, timeout_s=10):
            expected.update(indexes)
            return R.check(label, ds.wait_until(lambda: stored_all(indexes), timeout_s),
                           f"missing {[i for i in indexes if not stored_all([i])]}")

        def progress_stamp():
            rows = ds.query(db, "SELECT updated_ms FROM ingest_progress WHERE source LIKE 'tail:%'")
            return rows[0][0] if rows else None

        ds.write(path, HEADER + lines(range(0, 5)))
        daemon = ds.Daemon(daemon_program, config, log)
        try:
            daemon.start()
            wait_for(range(0, 5), "lines present at start are read")

            # Appended lines are visible within about a second (batches close after 1 s).
            started = time.monotonic()
            ds.append(path, line(5))
            wait_for([5], "an appended line is stored", timeout_s=5)
            latency = time.monotonic() - started
            R.check("an appended line is visible within ~2 s", latency < 2.5, f"{latency:.2f} s")

            # A line written in two parts is read once whole, not as its first part.
            before = progress_stamp()
            whole = line(6)
            ds.append(path, whole[:-3])
            R.check("the daemon read the partial line (progress written)",
                    ds.wait_until(lambda: progress_stamp() != before, 5))
            ds.append(path, whole[-3:] + line(7))
            wait_for([6, 7], "a line completed later is stored")

            # kill -9 while a too-long line is half written: after the restart it is one reject.
            long_line = ds.iso(T0 + 8 * MIN) + "," + "7" * 9000 + "\n"
            long_number = 1 + 9 + 1  # the header, lines 0..8, then this one
            ds.append(path, line(8) + long_line[:6000])
            wait_for([8], "line before the long one stored")
            # The stored progress stops where the unfinished long line starts, never inside it.
            line_start = os.path.getsize(path) - 6000
            R.check("progress stops at the start of an unfinished too-long line",
                    ds.wait_until(lambda: ds.query(
                        db, "SELECT byte_offset FROM ingest_progress WHERE source LIKE 'tail:%'")
                        == [(line_start,)], 5),
                    f"{ds.query(db, 'SELECT byte_offset FROM ingest_progress')} vs {line_start}")
            daemon.kill9()
            daemon.start()
            ds.append(path, long_line[6000:] + line(9))
            wait_for([9], "after kill -9 inside a long line, the next line is stored")

            # Stopped cleanly; lines appended while stopped are read at the next start.
            R.check("SIGTERM: exit 0", daemon.stop() == 0, daemon.log())
            ds.append(path, lines(range(10, 15)))
            daemon.start()
            wait_for(range(10, 15), "lines appended while stopped are read after the restart")

            # Truncated and rewritten shorter: read again from the start.
            with open(path, "w") as f:
                f.write(HEADER + lines([20, 21]))
            wait_for([20, 21], "truncated file: the new lines are stored")

            # Rewritten LONGER than what was read, in one go: must not resume in the middle.
            with open(path, "w") as f:
                f.write(HEADER + lines(range(30, 36)))
            wait_for(range(30, 36), "file rewritten longer: every new line is stored")

            # Rotation while running: renamed away, the logger writes one more line to the old
            # file before it reopens, then a new file appears at the path.
            rotated = path + ".1"
            os.rename(path, rotated)
            R.check("rotation noticed", ds.wait_until(lambda: "rotated" in daemon.log(), 5))
            ds.append(rotated, line(40))
            ds.write(path, HEADER + lines([41, 42]))
            wait_for([40, 41, 42], "rotation: lines of the old and the new file stored")

            # Rotation while stopped: the rest of the old file is still read.
            R.check("SIGTERM: exit 0 (2)", daemon.stop() == 0, daemon.log())
            ds.append(path, line(50))
            os.rename(path, path + ".2")
            ds.write(path, HEADER + line(51))
            daemon.start()
            wait_for([50, 51], "rotated while stopped: the old file's last lines are read")

            # Everything exactly once, with its stage; the long line is the only reject.
            have = ds.readings(db)
            want = {("raceway", T0 + i * MIN): float(stage(i)) for i in expected}
            R.check("exactly the lines written are stored", set(have) == set(want),
                    f"extra {sorted(set(have) - set(want))}, missing {sorted(set(want) - set(have))}")
            R.check("every stage as written",
                    all(have[k][0] == v for k, v in want.items() if k in have))
            kept = ds.rejects(db)
            R.check("one reject: the too-long line", len(kept) == 1, f"{kept}")
            if kept:
                source, position, raw, reason = kept[0]
                R.check("too-long reject: reason and position",
                        reason.startswith("too_long:") and position == f"line {long_number}",
                        f"{position} {reason}")
                R.check("too-long reject: its first 4096 bytes kept",
                        raw == long_line.encode()[:4096])
            R.check("the daemon is still running", daemon.running(), daemon.log())
            R.check("SIGTERM: exit 0 (3)", daemon.stop() == 0, daemon.log())
        finally:
            daemon.kill9()
    ds.exit_with(R)


if __name__ == "__main__":
    main()
