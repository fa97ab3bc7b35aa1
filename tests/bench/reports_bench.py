#!/usr/bin/env python3
"""How long `stagewell daily` and `stagewell stats` take for one site-year, as whole processes
(start to exit), with the stored figures current and with them stale. Never run by ctest.

    /usr/bin/python3 tests/bench/reports_bench.py --bin-dir build-rel/daemon [--runs 9]
        [--keep DIR]

An invented year of one-minute readings of one site (525,600 readings, a seasonal and daily swing
with sensor noise and a few spikes and holes) is written as CSV and stored once with the real
`stagewell ingest`, which keeps the daily figures. Then each report runs --runs times, in rotating
order, on two configurations that differ only in `timezone`:

  fresh   the configuration the figures were stored with: the reports read the stored figures;
  stale   another time zone: the stored figures do not match, so the reports compute the figures
          of the days asked for from the readings (what they do after a time-zone change until
          the service restarts).

Reported: the median and the range of each report's wall time, output to a pipe that is read and
thrown away. Target: every median <= 0.1 s. Measure with nothing else running on the machine.
"""
import argparse
import math
import os
import random
import shutil
import statistics
import subprocess
import sys
import tempfile
import time

MIN_MS = 60_000
# 2025-01-01T00:00:00-07:00 (local midnight in America/Denver), ms since the epoch.
START_MS = 1735714800_000
READINGS = 365 * 24 * 60  # 525,600
SITE = "bench-flume"

CONFIG = """units: metric
database: {database}
timezone: "{zone}"
sites:
  - id: {site}
    name: Invented bench flume
    section: {{shape: rectangular, width: 2.4, height: 1.2}}
    roughness: 0.014
    slope: 0.0015
    stage: {{units: m, zero_flow: 0.10}}
    checks: {{min_stage: 0.0, max_stage: 1.4, spike: 0.25, max_rate: 2.0, max_gap: 15m}}
"""

ZONES = {"fresh": "America/Denver", "stale": "America/Chicago"}


def iso(ms):
    seconds = ms // 1000
    return time.strftime("%Y-%m-%dT%H:%M:%SZ", time.gmtime(seconds))


def write_readings(path):
    """An invented year: seasonal and daily swing, noise, a spike every few days, a few holes."""
    rng = random.Random(20250101)
    holes = set()
    for _ in range(20):  # holes of 20 minutes to 5 hours: missing time in the figures
        first = rng.randrange(READINGS - 400)
        holes.update(range(first, first + rng.randrange(20, 300)))
    with open(path, "w") as f:
        f.write("site,time,stage\n")
        for i in range(READINGS):
            if i in holes:
                continue
            day = i / 1440.0
            stage = (0.55 + 0.15 * math.sin(2 * math.pi * day / 365.0)
                     + 0.03 * math.sin(2 * math.pi * day) + rng.gauss(0.0, 0.002))
            if i % 4321 == 2000:
                stage += 0.4  # a spike: flagged, bridged by the daily figures
            f.write(f"{SITE},{iso(START_MS + i * MIN_MS)},{stage:.3f}\n")


def build(root, stagewell):
    database = os.path.join(root, "stagewell.db")
    configs = {}
    for kind, zone in ZONES.items():
        configs[kind] = os.path.join(root, f"{kind}.yaml")
        with open(configs[kind], "w") as f:
            f.write(CONFIG.format(database=database, zone=zone, site=SITE))
    csv = os.path.join(root, "year.csv")
    write_readings(csv)
    started = time.monotonic()
    done = subprocess.run([stagewell, "ingest", "-q", "--config", configs["fresh"], csv],
                          capture_output=True, text=True)
    if done.returncode != 0:
        sys.exit(f"stagewell ingest failed ({done.returncode}):\n{done.stdout}{done.stderr}")
    print(f"ingested in {time.monotonic() - started:.1f} s: {done.stdout.splitlines()[0]}")
    return configs


def commands(stagewell, configs):
    """{label: argv} of every report timed."""
    out = {}
    for kind, config in configs.items():
        base = ["--config", config, "--site", SITE]
        out[f"daily, {kind}"] = [stagewell, "daily", *base, "--from", "2025-01-01",
                                 "--to", "2025-12-31"]
        out[f"daily --json, {kind}"] = out[f"daily, {kind}"] + ["--json"]
        out[f"stats, {kind}"] = [stagewell, "stats", *base]
        out[f"stats --json, {kind}"] = out[f"stats, {kind}"] + ["--json"]
    return out


def time_once(argv):
    started = time.perf_counter()
    done = subprocess.run(argv, stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    elapsed = time.perf_counter() - started
    if done.returncode != 0:
        sys.exit(f"{' '.join(argv)} exited {done.returncode}:\n{done.stderr.decode()}")
    return elapsed


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--bin-dir", default="build-rel/daemon")
    parser.add_argument("--runs", type=int, default=9)
    parser.add_argument("--keep", help="build the database in DIR (reused when it is there)")
    args = parser.parse_args()
    stagewell = os.path.abspath(os.path.join(args.bin_dir, "stagewell"))

    root = os.path.abspath(args.keep) if args.keep else tempfile.mkdtemp(prefix="reports-bench-")
    try:
        if args.keep and os.path.exists(os.path.join(root, "stagewell.db")):
            configs = {kind: os.path.join(root, f"{kind}.yaml") for kind in ZONES}
        else:
            os.makedirs(root, exist_ok=True)
            configs = build(root, stagewell)
        runs = commands(stagewell, configs)
        for argv in runs.values():
            time_once(argv)  # once each first, so the file is in the page cache for all
        times = {label: [] for label in runs}
        labels = list(runs)
        for r in range(args.runs):
            for label in labels[r % len(labels):] + labels[:r % len(labels)]:
                times[label].append(time_once(runs[label]))
        print(f"{args.runs} runs each, wall time start to exit (median, min-max):")
        for label, seconds in times.items():
            print(f"  {label:<22} {statistics.median(seconds) * 1000:7.1f} ms"
                  f"   ({min(seconds) * 1000:.1f}-{max(seconds) * 1000:.1f})")
    finally:
        if not args.keep:
            shutil.rmtree(root, ignore_errors=True)


if __name__ == "__main__":
    main()
