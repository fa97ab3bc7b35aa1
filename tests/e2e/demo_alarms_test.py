#!/usr/bin/env python3
"""The demo's history raises alarms: `stagewell ingest` of config/demo-data with config/demo.yaml
(its database moved to a temporary directory) leaves in the `alarms` view the raceway's low_flow
during its cleaning drawdown and the creek's rising during the storm.

The expected raise and clear times are computed here from the demo's CSV files with the rules of
docs/checks-and-alarms.md, "Alarms" and Manning's equation in closed form (daemon_support.manning),
not read from the program.
"""
import datetime
import glob
import os
import re
import subprocess
import tempfile

import daemon_support as ds

R = ds.Results()


def ms_of(text):
    return round(datetime.datetime.fromisoformat(text.replace("Z", "+00:00")).timestamp() * 1000)


def rows_of(path):
    """[(time ms, stage)] of a demo CSV (site,time,stage; '#' comments)."""
    out = []
    with open(path) as f:
        for line in f:
            if line.startswith("#") or line.startswith("site,"):
                continue
            _, time_text, stage = line.strip().split(",")
            out.append((ms_of(time_text), float(stage)))
    return out


def threshold_alarm(series, raises, clears, hold_ms):
    """[(raised_ms, cleared_ms or None)] for values in time order: raised at the value that
    completes hold_ms of values meeting `raises`, cleared at the first value meeting `clears`."""
    events, open_since, run_start = [], None, None
    for t, v in series:
        if open_since is not None:
            if clears(v):
                events.append((open_since, t))
                open_since = None
            continue
        if not raises(v):
            run_start = None
            continue
        run_start = t if run_start is None else run_start
        if t - run_start >= hold_ms:
            open_since, run_start = t, None
    if open_since is not None:
        events.append((open_since, None))
    return events


def rates(series, window_ms):
    """[(t, m/h)]: change from the oldest reading within the window to this one, when the window
    holds at least half a window of readings (docs/checks-and-alarms.md, "Alarms")."""
    out, window = [], []
    for t, stage in series:
        window.append((t, stage))
        window = [(u, s) for u, s in window if u >= t - window_ms]
        span = t - window[0][0]
        if span > 0 and 2 * span >= window_ms:
            out.append((t, (stage - window[0][1]) / (span / 3_600_000)))
    return out


def main():
    args = ds.parse_args()
    _, stagewell = ds.programs(args)
    source = os.path.abspath(args.source_dir)
    with tempfile.TemporaryDirectory(prefix="stagewell-e2e-") as root:
        with open(os.path.join(source, "config", "demo.yaml")) as f:
            text = f.read()
        text = re.sub(r"(?m)^database: .*$", "database: demo.db", text)
        text = re.sub(r"(?m)^  file: .*\n", "", text)  # no log file
        config = os.path.join(root, "demo.yaml")
        ds.write(config, text)
        files = sorted(glob.glob(os.path.join(source, "config", "demo-data", "*.csv")))
        run = subprocess.run([stagewell, "ingest", "--config", config, "-q"] + files, cwd=root,
                             capture_output=True, text=True, timeout=300)
        R.check("ingest ran", run.returncode == 0, run.stdout[-1000:] + run.stderr[-1000:])
        db = os.path.join(root, "demo.db")
        got = ds.query(db, "SELECT site, kind, raised, cleared, value, threshold FROM alarms "
                           "ORDER BY site, kind, raised")

        # Raceway A: rectangular 2.4 m wide, n 0.014, slope 0.0015, zero flow at stage 0.10 m
        # (config/demo.yaml); low_flow below 0.5 m^3/s, hysteresis 0.1, hold 15 min. Its stage range
        # 0 to 1.4 m keeps every demo reading in range.
        shape = ds.rectangular(2.4, 1.2)
        raceway = [(t, ds.manning(shape, 0.014, 0.0015, s - 0.10)[0])
                   for t, s in rows_of(files[[os.path.basename(f) for f in files]
                                             .index("raceway-a-2026-05.csv")])]
        low = threshold_alarm(raceway, lambda q: q < 0.5, lambda q: q > 0.6, 15 * 60_000)
        R.check("the demo history has a low-flow episode (set-up)", len(low) >= 1, f"{low}")
        got_low = [(ms_of(r), ms_of(c) if c else None) for s, k, r, c, _, _ in got
                   if s == "raceway-a" and k == "low_flow"]
        R.check("raceway-a low_flow raised and cleared as computed", got_low == low,
                f"got {got_low}, want {low}")

        # Brindlewick Creek: rising faster than 0.5 m/h across 1 h, clears below 0.3 m/h; stage
        # range 0.2 to 4.0 m (readings outside it are left out).
        creek = [(t, s) for t, s in rows_of(files[[os.path.basename(f) for f in files]
                                                  .index("brindlewick-creek-2026-05.csv")])
                 if 0.2 <= s <= 4.0]
        rising = threshold_alarm(rates(creek, 3_600_000), lambda r: r > 0.5, lambda r: r < 0.3, 0)
        R.check("the demo history has a fast rise (set-up)", len(rising) >= 1, f"{rising}")
        got_rising = [(ms_of(r), ms_of(c) if c else None) for s, k, r, c, _, _ in got
                      if s == "brindlewick-creek" and k == "rising"]
        R.check("brindlewick-creek rising raised and cleared as computed", got_rising == rising,
                f"got {got_rising}, want {rising}")
        R.check("no other alarms (no other site has any configured; stale needs the service)",
                all(s in ("raceway-a", "brindlewick-creek") and k in ("low_flow", "rising")
                    for s, k, *_ in got), f"{got}")
    ds.exit_with(R)


if __name__ == "__main__":
    main()
